import type { Logger } from 'pino';
import { RfInputError } from '../../../../shared/rf/errors.ts';
import { BATCH_OPERATIONS, type BatchOperation } from '../../../../shared/schemas/batch.ts';
import { nearMissHint } from '../../../../shared/schemas/field-hints.ts';
import { ApiError, type FieldIssue, type Problem } from '../../../http/problem.ts';
import { apiErrorFromZod } from '../../../http/zod-issues.ts';
import type { CalculationEnv } from '../calc/line-models.ts';
import { assertFinite, CALCULATIONS } from '../calc/operations.ts';

/** What one item gave: its output, or a problem shaped like the single endpoint's error response. */
export type ItemOutcome = { ok: true; output: unknown } | { ok: false; problem: Problem };

const OPERATIONS = new Set<string>(BATCH_OPERATIONS);

function join(prefix: string, field: string): string {
  if (prefix === '') return field;
  return field === '' ? prefix : `${prefix}.${field}`;
}

/** The error re-addressed to the item: every field gets `prefix.` in front, and the detail says so. */
function prefixed(error: ApiError, prefix: string): Problem {
  if (!error.errors || prefix === '') return error.toProblem();
  const errors: FieldIssue[] = error.errors.map((e) => ({ ...e, field: join(prefix, e.field) }));
  const detail = errors.map((e) => (e.field ? `${e.field}: ${e.message}` : e.message)).join('; ');
  return new ApiError(error.kind, detail, { errors }).toProblem();
}

function fail(kind: 'validation' | 'unprocessable', field: string, message: string, hint?: string): ItemOutcome {
  const text = hint ? `${message}; ${hint}` : message;
  return { ok: false, problem: new ApiError(kind, field ? `${field}: ${text}` : text, { errors: [{ field, message: text, ...(hint ? { hint } : {}) }] }).toProblem() };
}

const ITEM_FIELDS = ['op', 'input'] as const;

/**
 * Runs one batch item `{ op, input }` exactly as its single endpoint would (same schema, same code),
 * but answers a problem instead of throwing, so one bad item never fails the others. Fields in the
 * problem are addressed from the request root: `prefix` is `items.12` in a JSON batch and empty on an
 * NDJSON line.
 */
export function runItem(item: unknown, prefix: string, env: CalculationEnv, logger?: Logger): ItemOutcome {
  if (item === null || typeof item !== 'object' || Array.isArray(item)) {
    return fail('validation', prefix, 'each item is an object { "op": …, "input": { … } }');
  }
  const { op, input } = item as { op?: unknown; input?: unknown };
  for (const key in item) {
    if (key !== 'op' && key !== 'input') return fail('validation', join(prefix, key), 'unknown field; an item has only "op" and "input"', nearMissHint(key, ITEM_FIELDS));
  }
  if (typeof op !== 'string' || !OPERATIONS.has(op)) {
    // A path given as the op (`/api/v1/refer`) names its last segment.
    const last = typeof op === 'string' ? op.slice(op.lastIndexOf('/') + 1) : '';
    const hint = typeof op !== 'string' ? undefined : OPERATIONS.has(last) ? `did you mean ${last}?` : nearMissHint(op, BATCH_OPERATIONS);
    return fail('validation', join(prefix, 'op'), `op must be one of ${BATCH_OPERATIONS.map((o) => `"${o}"`).join(', ')}`, hint);
  }
  const calc = CALCULATIONS[op as BatchOperation];
  const inputPrefix = join(prefix, 'input');
  if (input === undefined) return fail('validation', inputPrefix, `give the body of the ${op} endpoint as input`);
  const parsed = calc.request.safeParse(input);
  if (!parsed.success) return { ok: false, problem: prefixed(apiErrorFromZod(parsed.error, 'body', { schema: calc.request, input }), inputPrefix) };
  try {
    return { ok: true, output: assertFinite(calc.run(parsed.data as never, env)) };
  } catch (err) {
    if (err instanceof RfInputError) return fail('unprocessable', join(inputPrefix, err.field), err.message);
    if (err instanceof ApiError) return { ok: false, problem: prefixed(err, inputPrefix) };
    logger?.error({ err, op }, 'batch item failed unexpectedly');
    return { ok: false, problem: new ApiError('internal', 'This item could not be computed because of a fault on our side; the others are unaffected. The request id in Request-Id helps us find it.').toProblem() };
  }
}
