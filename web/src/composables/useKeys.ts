import { ref, shallowRef } from 'vue';
import { useDialog } from 'naive-ui';
import { api, unwrap, type Schemas } from '../api/client.ts';
import { formatCount } from '../utils/format.ts';
import { useProblems } from './useProblems.ts';

type ApiKey = Schemas['ApiKey'];
export type KeyLimits = Pick<Schemas['UpdateApiKey'], 'dailyQuota' | 'burstPerMinute'>;

/** The keys the member manages (admins: every key of the organisation), with revoke and quota. */
export function useKeys() {
  const { attempt, message } = useProblems();
  const dialog = useDialog();
  const keys = shallowRef<ApiKey[]>([]);
  const loading = ref(false);

  async function load(): Promise<void> {
    loading.value = true;
    const answer = await attempt(() => unwrap(api.GET('/api/v1/keys')), 'Could not list the keys');
    if (answer) keys.value = answer.keys;
    loading.value = false;
  }

  function replace(updated: ApiKey): void {
    keys.value = keys.value.map((k) => (k.id === updated.id ? updated : k));
  }

  function confirmRevoke(key: ApiKey): void {
    dialog.warning({
      title: `Revoke “${key.name}”?`,
      content: `Programs using the key starting ${key.displayStart}… are refused from the next request on. This cannot be undone.`,
      positiveText: 'Revoke the key',
      negativeText: 'Keep it',
      onPositiveClick: async () => {
        const revoked = await attempt(
          () => unwrap(api.DELETE('/api/v1/keys/{id}', { params: { path: { id: key.id } } })),
          'Could not revoke the key',
        );
        if (revoked) {
          replace(revoked);
          message.success(`Key ${revoked.displayStart}… revoked.`);
        }
      },
    });
  }

  async function setLimits(key: ApiKey, limits: KeyLimits): Promise<boolean> {
    const updated = await attempt(
      () => unwrap(api.PATCH('/api/v1/keys/{id}', { params: { path: { id: key.id } }, body: limits })),
      'Could not change the limits',
    );
    if (!updated) return false;
    replace(updated);
    message.success(`${updated.name}: ${formatCount(updated.dailyQuota)} units per day, ${formatCount(updated.burstPerMinute)} requests per minute.`);
    return true;
  }

  return { keys, loading, load, replace, confirmRevoke, setLimits };
}
