import { z } from '../zod.ts';

/** One entry of a problem's field list: where the input is wrong and how to fix it. */
export const FieldIssueSchema = z
  .object({
    field: z.string().openapi({ description: 'Dotted path of the offending field in the request ("" for the whole body).', example: 'line.lengthM' }),
    message: z.string().openapi({ example: 'must be greater than or equal to 0' }),
    hint: z.string().optional().openapi({ description: 'For an unknown field close to a known one: the field probably meant.', example: 'did you mean frequencyHz (hertz)?' }),
  })
  .openapi('FieldIssue');

/** RFC 9457 problem details, the body of every error response. */
export const ProblemSchema = z
  .object({
    type: z.string().openapi({ description: 'A stable URI naming the kind of problem; branch on it, not on `title` or `detail`. The kinds are listed in the API description.', example: 'urn:gammaline:problem:validation' }),
    title: z.string().openapi({ example: 'The request body is not valid' }),
    status: z.number().int().openapi({ example: 400 }),
    detail: z.string().optional().openapi({ example: 'line.lengthM: must be greater than or equal to 0' }),
    instance: z.string().optional().openapi({ example: '/api/v1/line' }),
    errors: z.array(FieldIssueSchema).optional(),
  })
  .openapi('Problem', { description: 'RFC 9457 problem details (application/problem+json).' });

export type Problem = z.infer<typeof ProblemSchema>;
export type FieldIssue = z.infer<typeof FieldIssueSchema>;

export const PROBLEM_CONTENT_TYPE = 'application/problem+json';

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

/** Every problem type as a Markdown table (status, type URI, meaning): the API description and README show it. */
export function problemTypeTable(): string {
  const rows = (Object.keys(PROBLEM_KINDS) as ProblemKind[]).map((kind) => `| ${PROBLEM_KINDS[kind].status} | \`${problemType(kind)}\` | ${PROBLEM_KINDS[kind].meaning.replaceAll("|", "\\|")} |`);
  return ['| status | type | meaning |', '|---|---|---|', ...rows].join('\n');
}

export function problemType(kind: ProblemKind): string {
  return `urn:gammaline:problem:${kind.replace(/[A-Z]/g, (c) => `-${c.toLowerCase()}`)}`;
}

/** The one error type the server throws on purpose; the error middleware turns it into problem+json. */
export class ApiError extends Error {
  readonly kind: ProblemKind;
  readonly status: number;
  readonly errors?: FieldIssue[];
  readonly headers?: Record<string, string>;

  constructor(kind: ProblemKind, detail?: string, options: { errors?: FieldIssue[]; headers?: Record<string, string>; cause?: unknown } = {}) {
    super(detail ?? PROBLEM_KINDS[kind].title, { cause: options.cause });
    this.name = 'ApiError';
    this.kind = kind;
    this.status = PROBLEM_KINDS[kind].status;
    this.errors = options.errors;
    this.headers = options.headers;
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
