import type { z } from 'zod';
import { ApiError, type FieldIssue } from './problem.ts';

/**
 * Zod issues that mean "this is not the shape we accept" (wrong type, unknown key, bad union) are 400;
 * issues that mean "well-formed, but the value cannot be computed" (range, custom rules) are 422.
 */
const MALFORMED_CODES = new Set(['invalid_type', 'unrecognized_keys', 'invalid_union', 'invalid_key', 'invalid_element', 'invalid_format']);

export function fieldIssues(error: z.ZodError, prefix: (string | number)[] = []): FieldIssue[] {
  return error.issues.map((issue) => ({
    field: [...prefix, ...issue.path].map(String).join('.'),
    message: issue.message,
  }));
}

/** Converts a zod failure into the ApiError the error middleware answers with. */
export function apiErrorFromZod(error: z.ZodError, where: 'body' | 'query' | 'params' = 'body'): ApiError {
  const malformed = error.issues.some((i) => MALFORMED_CODES.has(i.code));
  const errors = fieldIssues(error);
  const detail = errors.map((e) => (e.field ? `${e.field}: ${e.message}` : e.message)).join('; ');
  const prefix = where === 'body' ? '' : `${where}: `;
  return new ApiError(malformed ? 'validation' : 'unprocessable', prefix + detail, { errors });
}
