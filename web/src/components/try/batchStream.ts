import { currentCsrfToken, unreachableProblem } from '../../api/client.ts';
import { ApiProblemError, readProblem, type ApiProblem } from '../../api/problem.ts';

/** One answered item of an NDJSON batch; `line` counts the items from 1, as the stream does. */
export type BatchLine =
  | { line: number; ok: true; output: Record<string, unknown> }
  | { line: number; ok: false; problem: ApiProblem };

/** The stream's closing line: without it, the answer was cut off. */
export interface BatchEnd {
  end: 'complete' | 'stopped';
  summary: { items: number; succeeded: number; failed: number; unitsCharged: number };
  problem?: ApiProblem;
}

export interface BatchAnswer {
  results: BatchLine[];
  end: BatchEnd | null;
}

/** The items as NDJSON: one `{ op, input }` per line, the form the API streams back line by line. */
export function toNdjson(items: readonly unknown[]): string {
  return items.map((item) => JSON.stringify(item)).join('\n') + '\n';
}

/**
 * Sends a batch as NDJSON with the console session and reads the answer as it arrives, reporting
 * how many items are answered so far; the JSON form would keep a person waiting for the whole body.
 */
export async function streamBatch(items: readonly unknown[], onProgress: (answered: number) => void, signal?: AbortSignal): Promise<BatchAnswer> {
  const headers: Record<string, string> = { 'Content-Type': 'application/x-ndjson', Accept: 'application/x-ndjson, application/problem+json' };
  const token = currentCsrfToken();
  if (token) headers['X-CSRF-Token'] = token;
  let response: Response;
  try {
    response = await fetch('/api/v1/batch', { method: 'POST', headers, body: toNdjson(items), credentials: 'same-origin', signal });
  } catch (error) {
    throw new ApiProblemError(unreachableProblem(error instanceof Error ? error.message : 'the request failed'));
  }
  if (!response.ok || !response.body) throw new ApiProblemError(await readProblem(response));

  const results: BatchLine[] = [];
  let end: BatchEnd | null = null;
  const reader = response.body.pipeThrough(new TextDecoderStream()).getReader();
  let pending = '';
  const take = (text: string) => {
    if (!text.trim()) return;
    const value = JSON.parse(text) as BatchLine | BatchEnd;
    if ('end' in value) end = value;
    else results.push(value);
  };
  for (;;) {
    const { value, done } = await reader.read();
    if (done) break;
    pending += value;
    const lines = pending.split('\n');
    pending = lines.pop() ?? '';
    for (const line of lines) take(line);
    onProgress(results.length);
  }
  take(pending);
  onProgress(results.length);
  return { results, end };
}
