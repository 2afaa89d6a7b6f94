/** One field that failed validation, as the API lists it in a problem's `errors`. */
export interface ApiProblemFieldError {
  /** Path of the offending input field, e.g. `load.re` or `lengthM`. */
  field: string;
  /** What is wrong with the value and how to fix it. */
  message: string;
}

/**
 * An RFC 9457 problem details object, the body of every error the Gammaline server answers
 * with `application/problem+json`. The console shows `title` and `detail` to people.
 */
export interface ApiProblem {
  /** URI naming the kind of problem; `about:blank` when only the status code is meaningful. */
  type: string;
  title: string;
  /** The HTTP status code the server answered with. */
  status: number;
  detail: string;
  instance?: string;
  errors?: ApiProblemFieldError[];
}

/** Thrown by API helpers so callers can catch one type and still read the problem. */
export class ApiProblemError extends Error {
  readonly problem: ApiProblem;

  constructor(problem: ApiProblem) {
    super(problem.detail ? `${problem.title}: ${problem.detail}` : problem.title);
    this.name = 'ApiProblemError';
    this.problem = problem;
  }
}

function isRecord(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

function toFieldErrors(value: unknown): ApiProblemFieldError[] | undefined {
  if (!Array.isArray(value)) return undefined;
  const list: ApiProblemFieldError[] = [];
  for (const item of value) {
    if (isRecord(item) && typeof item.field === 'string' && typeof item.message === 'string') {
      list.push({ field: item.field, message: item.message });
    }
  }
  return list;
}

/**
 * Reads a parsed JSON body as a problem. RFC 9457 lets servers omit `type` (meaning
 * `about:blank`) and `detail`, so only `title` is demanded; `status` falls back to the
 * HTTP status the body came with.
 */
export function toApiProblem(body: unknown, httpStatus: number): ApiProblem | null {
  if (!isRecord(body) || typeof body.title !== 'string') return null;
  const problem: ApiProblem = {
    type: typeof body.type === 'string' ? body.type : 'about:blank',
    title: body.title,
    status: typeof body.status === 'number' ? body.status : httpStatus,
    detail: typeof body.detail === 'string' ? body.detail : '',
  };
  if (typeof body.instance === 'string') problem.instance = body.instance;
  const errors = toFieldErrors(body.errors);
  if (errors) problem.errors = errors;
  return problem;
}

/**
 * Turns a failed response into a problem. A proxy or a crashed server may answer with HTML or
 * nothing, so a body that is not a problem still yields one built from the status line.
 */
export async function readProblem(response: Response): Promise<ApiProblem> {
  let body: unknown = null;
  try {
    body = await response.json();
  } catch {
    body = null;
  }
  return (
    toApiProblem(body, response.status) ?? {
      type: 'about:blank',
      title: response.statusText || `HTTP ${response.status}`,
      status: response.status,
      detail: `The server answered ${response.status} without a problem description.`,
    }
  );
}
