import { z } from '../zod.ts';
import { PROBLEM_KINDS, ProblemError, problemType, type ProblemKind } from '../../shared/problems/problem.ts';

export { PROBLEM_KINDS, problemType, type ProblemKind };

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

/** Every problem type as a Markdown table (status, type URI, meaning): the API description and README show it. */
export function problemTypeTable(): string {
  const rows = (Object.keys(PROBLEM_KINDS) as ProblemKind[]).map((kind) => `| ${PROBLEM_KINDS[kind].status} | \`${problemType(kind)}\` | ${PROBLEM_KINDS[kind].meaning.replaceAll("|", "\\|")} |`);
  return ['| status | type | meaning |', '|---|---|---|', ...rows].join('\n');
}

/**
 * The one error type the server throws on purpose; the error middleware turns it into problem+json.
 * The problem itself (kind, status, detail, field issues) is shared/problems' ProblemError, which the
 * calculations answer with offline too; the server adds the response headers.
 */
export class ApiError extends ProblemError {
  // Not redeclaring kind/status/errors here: a class field would reset them after super().
  readonly headers?: Record<string, string>;

  constructor(kind: ProblemKind, detail?: string, options: { errors?: FieldIssue[]; headers?: Record<string, string>; cause?: unknown } = {}) {
    super(kind, detail, { errors: options.errors, cause: options.cause });
    this.name = 'ApiError';
    this.headers = options.headers;
  }
}
