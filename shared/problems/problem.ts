/**
 * RFC 9457 problem details as plain data: the kinds Gammaline answers with, their stable type URIs
 * and titles, and the error that carries one. Shared so that a batch item computed by the server and
 * the same item computed offline by @gammaline/calc give the same problem, byte for byte.
 */

/** One entry of a problem's field list: where the input is wrong and how to fix it. */
export interface FieldIssue {
  /** Dotted path of the offending field ("" for the whole body or item). */
  field: string;
  message: string;
  /** For an unknown field close to a known one: the field probably meant. */
  hint?: string;
}

/** RFC 9457 problem details, the body of every error response and of every failed batch item. */
export interface Problem {
  type: string;
  title: string;
  status: number;
  detail?: string;
  instance?: string;
  errors?: FieldIssue[];
}

/**
 * Problem kinds we answer with; the type URI is stable so clients can branch on it, and `meaning` is
 * what the OpenAPI document and README's table say about each.
 */
export const PROBLEM_KINDS = {
  badRequest: { status: 400, title: 'The request is malformed', meaning: 'The request could not be read: a body cut short or inconsistent with its Content-Length, a query that cannot be parsed.' },
  validation: { status: 400, title: 'The request body is not valid', meaning: 'The request does not fit the schema: a required field missing, an unknown field (with a hint when it is close to a known one), a wrong type, a value outside an enum, a form that fits none of the accepted ones. `errors[]` names each field.' },
  malformedJson: { status: 400, title: 'The request body is not valid JSON', meaning: 'The body is not JSON at all; check quotes, commas and brackets.' },
  unauthenticated: { status: 401, title: 'Authentication is required', meaning: 'No valid key or session. Missing, unknown, revoked and expired keys all answer the same.' },
  forbidden: { status: 403, title: 'You are not allowed to do this', meaning: 'The caller is known, but its role does not allow this, or a console write lacks its CSRF token.' },
  notFound: { status: 404, title: 'Not found', meaning: 'No such path, or no such resource in your organisation; the detail names the full path asked.' },
  methodNotAllowed: { status: 405, title: 'Method not allowed', meaning: 'The path exists but does not take this method; `Allow` lists the ones it takes.' },
  conflict: { status: 409, title: 'Conflict', meaning: 'The change conflicts with the current state (a name or id already taken, a cable still in use).' },
  payloadTooLarge: { status: 413, title: 'The request body is too large', meaning: 'The body, or one NDJSON line, is over its limit; split the work.' },
  unsupportedMediaType: { status: 415, title: 'Unsupported content type', meaning: 'The body is not in a media type this operation takes.' },
  unprocessable: { status: 422, title: 'The input cannot be computed', meaning: 'Well-formed values that cannot be computed or are physically impossible: SWR below 1, |Γ| above 1, reflected power above forward, readings the line loss makes impossible, a negative length. `errors[]` names the field.' },
  tooManyRequests: { status: 429, title: 'Too many requests', meaning: 'The per-minute burst limit or the daily quota is spent, or sign-in attempts are throttled; wait `Retry-After` seconds.' },
  internal: { status: 500, title: 'Internal error', meaning: 'A fault on our side; quote the `Request-Id` of the answer when you report it.' },
  unavailable: { status: 503, title: 'Service unavailable', meaning: 'The database is unreachable or too slow to answer; retry after `Retry-After` seconds.' },
} as const;

export type ProblemKind = keyof typeof PROBLEM_KINDS;

export function problemType(kind: ProblemKind): string {
  return `urn:gammaline:problem:${kind.replace(/[A-Z]/g, (c) => `-${c.toLowerCase()}`)}`;
}

/**
 * An error that is one problem. The server's ApiError (server/http/problem.ts) extends it with
 * response headers; calculations catch it to answer the problem instead of throwing.
 */
export class ProblemError extends Error {
  readonly kind: ProblemKind;
  readonly status: number;
  readonly errors?: FieldIssue[];

  constructor(kind: ProblemKind, detail?: string, options: { errors?: FieldIssue[]; cause?: unknown } = {}) {
    super(detail ?? PROBLEM_KINDS[kind].title, { cause: options.cause });
    this.name = 'ProblemError';
    this.kind = kind;
    this.status = PROBLEM_KINDS[kind].status;
    this.errors = options.errors;
  }

  toProblem(instance?: string): Problem {
    return {
      type: problemType(this.kind),
      title: PROBLEM_KINDS[this.kind].title,
      status: this.status,
      detail: this.message,
      ...(instance ? { instance } : {}),
      ...(this.errors ? { errors: this.errors } : {}),
    };
  }
}
