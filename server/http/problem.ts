import { z } from '../zod.ts';

/** One entry of a problem's field list: where the input is wrong and how to fix it. */
export const FieldIssueSchema = z
  .object({
    field: z.string().openapi({ description: 'Dotted path of the offending field in the request ("" for the whole body).', example: 'line.lengthM' }),
    message: z.string().openapi({ example: 'must be greater than or equal to 0' }),
  })
  .openapi('FieldIssue');

/** RFC 9457 problem details, the body of every error response. */
export const ProblemSchema = z
  .object({
    type: z.string().openapi({ example: 'urn:gammaline:problem:validation' }),
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

/** Problem kinds we answer with; the type URI is stable so clients can branch on it. */
export const PROBLEM_KINDS = {
  badRequest: { status: 400, title: 'The request is malformed' },
  validation: { status: 400, title: 'The request body is not valid' },
  malformedJson: { status: 400, title: 'The request body is not valid JSON' },
  unauthenticated: { status: 401, title: 'Authentication is required' },
  forbidden: { status: 403, title: 'You are not allowed to do this' },
  notFound: { status: 404, title: 'Not found' },
  methodNotAllowed: { status: 405, title: 'Method not allowed' },
  conflict: { status: 409, title: 'Conflict' },
  payloadTooLarge: { status: 413, title: 'The request body is too large' },
  unsupportedMediaType: { status: 415, title: 'Unsupported content type' },
  unprocessable: { status: 422, title: 'The input cannot be computed' },
  tooManyRequests: { status: 429, title: 'Too many requests' },
  internal: { status: 500, title: 'Internal error' },
  unavailable: { status: 503, title: 'Service unavailable' },
} as const;

export type ProblemKind = keyof typeof PROBLEM_KINDS;

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
