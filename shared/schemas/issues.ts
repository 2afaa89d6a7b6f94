import type { z } from 'zod';

/**
 * The one rule for 400 and 422. An issue is about the request's shape (400) when the request does
 * not fit the schema: a wrong type or a missing field (zod's invalid_type), an unknown field, a value
 * outside an enum or literal, a form that fits no branch of a union, a malformed string; or a rule of
 * our own that says which fields go together (added with `shapeIssue`). Everything else (ranges, rules
 * about values) is a well-formed value that cannot be computed (422).
 */
const SHAPE_CODES = new Set<string>(['invalid_type', 'unrecognized_keys', 'invalid_union', 'invalid_key', 'invalid_element', 'invalid_format', 'invalid_value']);

export function isShapeIssue(issue: z.core.$ZodIssue): boolean {
  if (SHAPE_CODES.has(issue.code)) return true;
  return issue.code === 'custom' && (issue as { params?: { shape?: boolean } }).params?.shape === true;
}

/**
 * Adds an issue from a refinement that checks which fields are present together (one of several
 * forms, a field required with another, two alternatives at once): part of the shape, so 400.
 */
export function shapeIssue(ctx: z.RefinementCtx, path: PropertyKey[], message: string): void {
  ctx.addIssue({ code: 'custom', path, message, params: { shape: true } });
}

/**
 * Re-adds the issues of a schema checked inside a refinement, keeping whether each is about shape,
 * so a nested parse answers with the same status as a direct one.
 */
export function forwardIssues(ctx: z.RefinementCtx, issues: readonly z.core.$ZodIssue[]): void {
  for (const issue of issues) {
    ctx.addIssue({ code: 'custom', path: [...issue.path], message: issue.message, params: { shape: isShapeIssue(issue) } });
  }
}
