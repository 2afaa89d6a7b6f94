import { currentCsrfToken, unreachableProblem, type Schemas } from './client.ts';
import { ApiProblemError, toApiProblem } from './problem.ts';

/**
 * Uploads a sweep file as multipart/form-data. fetch cannot report upload progress, so this one
 * request uses XMLHttpRequest; it answers with the same ApiProblemError as the typed client.
 */
export function uploadSweep(form: FormData, onProgress: (fraction: number) => void): { done: Promise<Schemas['Sweep']>; abort: () => void } {
  const xhr = new XMLHttpRequest();
  const done = new Promise<Schemas['Sweep']>((resolve, reject) => {
    xhr.open('POST', '/api/v1/sweeps');
    xhr.responseType = 'text';
    xhr.setRequestHeader('Accept', 'application/json, application/problem+json');
    const token = currentCsrfToken();
    if (token) xhr.setRequestHeader('X-CSRF-Token', token);
    xhr.upload.onprogress = (event) => {
      if (event.lengthComputable && event.total > 0) onProgress(event.loaded / event.total);
    };
    xhr.onload = () => {
      let body: unknown = null;
      try {
        body = JSON.parse(xhr.responseText);
      } catch {
        body = null;
      }
      if (xhr.status >= 200 && xhr.status < 300 && body !== null) {
        onProgress(1);
        resolve(body as Schemas['Sweep']);
        return;
      }
      reject(
        new ApiProblemError(
          toApiProblem(body, xhr.status) ?? {
            type: 'about:blank',
            title: xhr.statusText || `HTTP ${xhr.status}`,
            status: xhr.status,
            detail: `The server answered ${xhr.status} without a problem description.`,
          },
        ),
      );
    };
    xhr.onerror = () => reject(new ApiProblemError(unreachableProblem('The upload was interrupted')));
    xhr.onabort = () => reject(new ApiProblemError({ type: 'about:blank', title: 'Upload stopped', status: 0, detail: 'You stopped the upload; nothing was stored.' }));
    xhr.send(form);
  });
  return { done, abort: () => xhr.abort() };
}
