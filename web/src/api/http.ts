import { type ApiProblem, readProblem } from './problem.ts';

/** What a request to the server came to: a body of the expected shape, a problem, or silence. */
export type FetchOutcome<T> =
  | { kind: 'ok'; body: T }
  | { kind: 'problem'; problem: ApiProblem }
  | { kind: 'unreachable'; reason: string };

/** Long enough for a cold database connection, short enough that a person is not left waiting. */
export const DEFAULT_TIMEOUT_MS = 8000;

/**
 * GETs a JSON document and checks its shape. Never throws: network failures, timeouts,
 * error statuses and unexpected bodies all come back as an outcome the caller can show.
 */
export async function getJson<T>(
  path: string,
  isExpected: (body: unknown) => body is T,
  timeoutMs = DEFAULT_TIMEOUT_MS,
): Promise<FetchOutcome<T>> {
  const controller = new AbortController();
  const timer = setTimeout(() => controller.abort(), timeoutMs);
  let response: Response;
  try {
    response = await fetch(path, {
      headers: { accept: 'application/json, application/problem+json' },
      signal: controller.signal,
      cache: 'no-store',
    });
  } catch (error) {
    clearTimeout(timer);
    const reason = controller.signal.aborted
      ? `no answer within ${timeoutMs >= 1000 ? `${Math.round(timeoutMs / 1000)} s` : `${timeoutMs} ms`}`
      : error instanceof Error
        ? error.message
        : 'the request failed';
    return { kind: 'unreachable', reason };
  }
  clearTimeout(timer);

  if (!response.ok) {
    return { kind: 'problem', problem: await readProblem(response) };
  }
  let body: unknown;
  try {
    body = await response.json();
  } catch {
    body = undefined;
  }
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
