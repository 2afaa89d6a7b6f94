import type { z } from 'zod';
import { zodFailure, type IssueContext } from '../../shared/schemas/zod-issues.ts';
import { ApiError } from './problem.ts';

// The conversion itself is shared (shared/schemas/zod-issues.ts): batch items computed offline answer
// the same problems as the server.
export { expandUnions, fieldIssues, type IssueContext } from '../../shared/schemas/zod-issues.ts';

/**
 * Converts a zod failure into the ApiError the error middleware answers with: 400 when anything does
 * not fit the schema's shape (see isShapeIssue), 422 when every issue is about a value that cannot be
 * computed. The context (the schema that failed and the input it saw) sharpens the messages.
 */
export function apiErrorFromZod(zodError: z.ZodError, where: 'body' | 'query' | 'params' = 'body', context: IssueContext = {}): ApiError {
  const { kind, detail, errors } = zodFailure(zodError, where, context);
  return new ApiError(kind, detail, { errors });
}
