import createClient, { type Middleware } from 'openapi-fetch';
import type { components, paths } from './schema.d.ts';
import { ApiProblemError, toApiProblem, type ApiProblem } from './problem.ts';

export type Schemas = components['schemas'];

const WRITE_METHODS = new Set(['POST', 'PUT', 'PATCH', 'DELETE']);

let csrfToken: string | null = null;

/** The session store hands the token over after sign-in; cookie-authenticated writes must echo it. */
export function setCsrfToken(token: string | null): void {
  csrfToken = token;
}

export function currentCsrfToken(): string | null {
  return csrfToken;
}

const csrf: Middleware = {
  onRequest({ request }) {
    if (csrfToken && WRITE_METHODS.has(request.method.toUpperCase())) {
      request.headers.set('X-CSRF-Token', csrfToken);
    }
    request.headers.set('Accept', 'application/json, application/problem+json');
    return request;
  },
};

// Relative URLs need a base outside a browser page (component tests run at about:blank).
function baseUrl(): string {
  const origin = globalThis.location?.origin;
  return origin && origin !== 'null' ? origin : 'http://localhost';
}

/**
 * THE typed client of the Gammaline API, generated from openapi/openapi.json. The console calls
 * with its session cookie; fetch is looked up per call so tests can stub it.
 */
export const api = createClient<paths>({
  baseUrl: baseUrl(),
  credentials: 'same-origin',
  fetch: (request) => globalThis.fetch(request),
});
api.use(csrf);

/** A problem for a request that never got an answer. */
export function unreachableProblem(reason: string): ApiProblem {
  return {
    type: 'about:blank',
    title: 'The server did not answer',
    status: 0,
    detail: `${reason}. Check that the Gammaline server is running, then try again.`,
  };
}

/** The problem of a failed answer; a body that is not a problem still yields one built from the status line. */
export function problemFrom(error: unknown, response: Response): ApiProblem {
  return (
    toApiProblem(error, response.status) ?? {
      type: 'about:blank',
      title: response.statusText || `HTTP ${response.status}`,
      status: response.status,
      detail: `The server answered ${response.status} without a problem description.`,
    }
  );
}

type Outcome<T> = { data?: T; error?: unknown; response: Response };

/**
 * Awaits an openapi-fetch call and returns its body, or throws ApiProblemError with the RFC 9457
 * problem the server sent (or one made up for a network failure). One error type for the console.
 */
export async function unwrap<T>(call: Promise<Outcome<T>>): Promise<NonNullable<T>> {
  let outcome: Outcome<T>;
  try {
    outcome = await call;
  } catch (error) {
    throw new ApiProblemError(unreachableProblem(error instanceof Error ? error.message : 'the request failed'));
  }
  if (!outcome.response.ok || outcome.error !== undefined) {
    throw new ApiProblemError(problemFrom(outcome.error, outcome.response));
  }
  if (outcome.data === undefined || outcome.data === null) {
    throw new ApiProblemError({
      type: 'about:blank',
      title: 'Empty answer',
      status: outcome.response.status,
      detail: 'The server answered without a body where the console expected one; reload the page.',
    });
  }
  return outcome.data;
}

/** Like unwrap, for answers without a body (204). */
export async function unwrapEmpty(call: Promise<Outcome<unknown>>): Promise<void> {
  let outcome: Outcome<unknown>;
  try {
    outcome = await call;
  } catch (error) {
    throw new ApiProblemError(unreachableProblem(error instanceof Error ? error.message : 'the request failed'));
  }
  if (!outcome.response.ok) throw new ApiProblemError(problemFrom(outcome.error, outcome.response));
}

/** The problem inside anything a call threw; programming errors become a generic problem. */
export function asProblem(error: unknown): ApiProblem {
  if (error instanceof ApiProblemError) return error.problem;
  return {
    type: 'about:blank',
    title: 'Something went wrong in the console',
    status: 0,
    detail: error instanceof Error ? error.message : String(error),
  };
}
