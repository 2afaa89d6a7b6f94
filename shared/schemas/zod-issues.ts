import { z } from 'zod';
import type { FieldIssue } from '../problems/problem.ts';
import { knownFieldsAt, nearMissHint } from './field-hints.ts';
import { isShapeIssue } from './issues.ts';

// zod failures turned into the field list and status of a problem: the server's 400/422 answers
// (server/http/zod-issues.ts) and the problems of batch items, online and offline, come from here.

/** Unknown fields listed one by one per object; past this the rest are counted in one entry. */
const MAX_UNKNOWN_LISTED = 10;

/** The request's value at `path`; undefined for a field left out. */
function valueAt(input: unknown, path: readonly PropertyKey[]): unknown {
  let value = input;
  for (const key of path) {
    if (value === null || typeof value !== 'object' || !Object.hasOwn(value, key)) return undefined;
    value = (value as Record<PropertyKey, unknown>)[key];
  }
  return value;
}

/**
 * A zod issue reported as field entries. Unknown fields get an entry each, addressed to the field
 * itself (`line.lengthMeters`, not `line`), with a hint when a known field is close; a field left out
 * reads "required (…)" whatever zod called it.
 */
function entriesOf(issue: z.core.$ZodIssue, prefix: readonly PropertyKey[], context: IssueContext): FieldIssue[] {
  const path = [...prefix, ...issue.path];
  if (issue.code === 'unrecognized_keys') {
    const known = context.schema ? knownFieldsAt(context.schema, issue.path) : new Set<string>();
    const listed = issue.keys.slice(0, MAX_UNKNOWN_LISTED).map((key): FieldIssue => {
      const hint = nearMissHint(key, known);
      return { field: fieldName([...path, key]), message: hint ? `unknown field; ${hint}` : 'unknown field', ...(hint ? { hint } : {}) };
    });
    const more = issue.keys.length - listed.length;
    return more > 0 ? [...listed, { field: fieldName(path), message: `and ${more} more unknown fields` }] : listed;
  }
  if (context.input !== undefined && (issue.code === 'invalid_type' || issue.code === 'invalid_value') && valueAt(context.input, issue.path) === undefined) {
    const expected = issue.code === 'invalid_type' ? issue.expected : `one of ${issue.values.map((v) => JSON.stringify(v)).join(', ')}`;
    return [{ field: fieldName(path), message: `required (${expected})` }];
  }
  const renamed = issue.code === 'invalid_value' ? RENAMED_BEFORE_V1[String(valueAt(context.input, issue.path))] : undefined;
  if (renamed) return [{ field: fieldName(path), message: `${issue.message}; renamed to ${renamed} in 0.2.0`, hint: `did you mean ${renamed}?` }];
  return [{ field: fieldName(path), message: issue.message }];
}

/** Enum values renamed before v1 was declared stable (CHANGELOG.md): the old name points to the new. */
const RENAMED_BEFORE_V1: Record<string, string> = { sourceToLoad: 'inputToLoad', loadToSource: 'loadToInput' };

function fieldName(path: readonly PropertyKey[]): string {
  return path.map(String).join('.');
}

/** What the failed parse saw: the schema (for neighbours of unknown fields) and the input (for left-out fields). */
export interface IssueContext {
  schema?: z.ZodType;
  input?: unknown;
}

export function fieldIssues(error: z.ZodError, prefix: (string | number)[] = [], context: IssueContext = {}): FieldIssue[] {
  return error.issues.flatMap((issue) => entriesOf(issue, prefix, context));
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

/** A zod failure as the parts of its problem: the kind (400 or 422), the detail and the field list. */
export interface ZodFailure {
  kind: 'validation' | 'unprocessable';
  detail: string;
  errors: FieldIssue[];
}

/**
 * What a zod failure answers: 400 (`validation`) when anything does not fit the schema's shape (see
 * isShapeIssue), 422 (`unprocessable`) when every issue is about a value that cannot be computed. The
 * context (the schema that failed and the input it saw) sharpens the messages.
 */
export function zodFailure(zodError: z.ZodError, where: 'body' | 'query' | 'params' = 'body', context: IssueContext = {}): ZodFailure {
  const error = expandUnions(zodError);
  // A path parameter out of its range (an id too long) is a malformed address, not an uncomputable value.
  const malformed = where === 'params' || error.issues.some(isShapeIssue);
  const errors = fieldIssues(error, [], context);
  const detail = errors.map((e) => (e.field ? `${e.field}: ${e.message}` : e.message)).join('; ');
  const prefix = where === 'body' ? '' : `${where}: `;
  return { kind: malformed ? 'validation' : 'unprocessable', detail: prefix + detail, errors };
}
