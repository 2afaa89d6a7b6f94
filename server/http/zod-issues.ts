import { z } from 'zod';
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

/**
 * zod reports a value that fits no branch of a union as one "Invalid input"; when only one branch
 * has the right shape (an object for `{ re, im }` rather than a number, an array for line sections),
 * its own issues say more (`loadOhm.im: expected number`).
 */
export function expandUnions(error: z.ZodError): z.ZodError {
  if (!error.issues.some((i) => i.code === 'invalid_union')) return error;
  const issues = error.issues.flatMap((issue) => {
    if (issue.code !== 'invalid_union' || !('errors' in issue) || !Array.isArray(issue.errors)) return [issue];
    const branches = (issue.errors as z.core.$ZodIssue[][]).filter((b) => !b.some((i) => i.code === 'invalid_type' && i.path.length === 0));
    if (branches.length !== 1) return [issue];
    return branches[0]!.map((i) => ({ ...i, path: [...issue.path, ...i.path] }));
  });
  return new z.ZodError(issues);
}

/** Converts a zod failure into the ApiError the error middleware answers with. */
export function apiErrorFromZod(zodError: z.ZodError, where: 'body' | 'query' | 'params' = 'body'): ApiError {
  const error = expandUnions(zodError);
  // A path parameter out of its range (an id too long) is a malformed address, not an uncomputable value.
  const malformed = where === 'params' || error.issues.some((i) => MALFORMED_CODES.has(i.code));
  const errors = fieldIssues(error);
  const detail = errors.map((e) => (e.field ? `${e.field}: ${e.message}` : e.message)).join('; ');
  const prefix = where === 'body' ? '' : `${where}: `;
  return new ApiError(malformed ? 'validation' : 'unprocessable', prefix + detail, { errors });
}
