import { ref, shallowRef } from 'vue';
import { api, problemFrom, type Schemas } from '../api/client.ts';
import type { ApiProblem } from '../api/problem.ts';

/** What a check of the server came to: a body of the expected shape, a problem, or silence. Never thrown. */
export type CheckOutcome<T> =
  | { kind: 'ok'; body: T }
  | { kind: 'problem'; problem: ApiProblem }
  | { kind: 'unreachable'; reason: string };

/** Long enough for a cold database connection, short enough that a person is not left waiting. */
export const CHECK_TIMEOUT_MS = 8000;

type CheckInit = { parseAs: 'text'; signal: AbortSignal; cache: RequestCache };
type CheckCall = (init: CheckInit) => Promise<{ data?: string; error?: unknown; response: Response }>;

function isRecord(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null;
}

function isHealth(body: unknown): body is Schemas['Health'] {
  return (
    isRecord(body) &&
    body.status === 'ok' &&
    typeof body.version === 'string' &&
    typeof body.uptimeS === 'number' &&
    Number.isFinite(body.uptimeS)
  );
}

function isReadiness(body: unknown): body is Schemas['Readiness'] {
  return isRecord(body) && body.status === 'ready' && body.database === 'up';
}

function parsedOrUndefined(text: string | undefined): unknown {
  if (text === undefined) return undefined;
  try {
    return JSON.parse(text);
  } catch {
    return undefined;
  }
}

function waited(timeoutMs: number): string {
  return timeoutMs >= 1000 ? `${Math.round(timeoutMs / 1000)} s` : `${timeoutMs} ms`;
}

/**
 * Runs one check through the typed client. The body is read as text and its shape checked here,
 * because a page answering in the API's place (a proxy, a dev server's fallback) must show as a
 * problem with its status, not as a server that cannot be reached.
 */
async function check<T>(
  path: string,
  call: CheckCall,
  isExpected: (body: unknown) => body is T,
  timeoutMs: number,
): Promise<CheckOutcome<T>> {
  const controller = new AbortController();
  const timer = setTimeout(() => controller.abort(), timeoutMs);
  let outcome: Awaited<ReturnType<CheckCall>>;
  try {
    outcome = await call({ parseAs: 'text', signal: controller.signal, cache: 'no-store' });
  } catch (error) {
    const reason = controller.signal.aborted
      ? `no answer within ${waited(timeoutMs)}`
      : error instanceof Error
        ? error.message
        : 'the request failed';
    return { kind: 'unreachable', reason };
  } finally {
    clearTimeout(timer);
  }

  const { data, error, response } = outcome;
  if (!response.ok) return { kind: 'problem', problem: problemFrom(error, response) };
  const body = parsedOrUndefined(data);
  if (!isExpected(body)) {
    return {
      kind: 'problem',
      problem: {
        type: 'about:blank',
        title: 'Unexpected answer',
        status: response.status,
        detail: `${path} answered with a body the console does not understand; the console and server versions may differ. Reload the page.`,
      },
    };
  }
  return { kind: 'ok', body };
}

/** Liveness of the server process. */
export function checkHealth(timeoutMs = CHECK_TIMEOUT_MS): Promise<CheckOutcome<Schemas['Health']>> {
  return check('/healthz', (init) => api.GET('/healthz', init), isHealth, timeoutMs);
}

/** Readiness to serve requests; a 503 problem means the database cannot be reached. */
export function checkReadiness(timeoutMs = CHECK_TIMEOUT_MS): Promise<CheckOutcome<Schemas['Readiness']>> {
  return check('/readyz', (init) => api.GET('/readyz', init), isReadiness, timeoutMs);
}

/** Liveness and readiness of the server, checked together and refreshed on demand. */
export function useServiceStatus() {
  const health = shallowRef<CheckOutcome<Schemas['Health']> | null>(null);
  const readiness = shallowRef<CheckOutcome<Schemas['Readiness']> | null>(null);
  const loading = ref(false);
  const checkedAt = ref<Date | null>(null);
  // A slow earlier check must not overwrite a newer one that finished first.
  let latest = 0;

  async function refresh(): Promise<void> {
    const run = ++latest;
    loading.value = true;
    try {
      const [h, r] = await Promise.all([checkHealth(), checkReadiness()]);
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
