import { ref, shallowRef } from 'vue';
import { fetchHealth, fetchReadiness, type Health, type Readiness } from '../api/health.ts';
import type { FetchOutcome } from '../api/http.ts';

/** Liveness and readiness of the server, checked together and refreshed on demand. */
export function useServiceStatus() {
  const health = shallowRef<FetchOutcome<Health> | null>(null);
  const readiness = shallowRef<FetchOutcome<Readiness> | null>(null);
  const loading = ref(false);
  const checkedAt = ref<Date | null>(null);
  // A slow earlier check must not overwrite a newer one that finished first.
  let latest = 0;

  async function refresh(): Promise<void> {
    const run = ++latest;
    loading.value = true;
    try {
      const [h, r] = await Promise.all([fetchHealth(), fetchReadiness()]);
      if (run !== latest) return;
      health.value = h;
      readiness.value = r;
      checkedAt.value = new Date();
    } finally {
      if (run === latest) loading.value = false;
    }
  }

  return { health, readiness, loading, checkedAt, refresh };
}
