import type { z } from 'zod';
import { RfInputError } from '../rf/errors.ts';
import { ProblemError, type FieldIssue, type Problem } from '../problems/problem.ts';
import { nearMissHint } from '../schemas/field-hints.ts';
import { zodFailure } from '../schemas/zod-issues.ts';
import { catalogOnly, type CableLookup } from './cable-lookup.ts';
import { assertFinite, NonFiniteResultError } from './finite.ts';
import { CALCULATION_NAMES, calculationNamed, type CALCULATIONS, type CalculationName } from './table.ts';

// One item of work { op, input } computed and answered as data: the server's batches (JSON and
// NDJSON) and the offline package @gammaline/calc both run this function, so they answer alike by
// construction, problems included.

/** What one item gave: its output, or a problem shaped like the single endpoint's error response. */
export type ItemOutcome<Output = unknown> = { ok: true; output: Output } | { ok: false; problem: Problem };

/** Where a fault in our own code is reported (the server passes its request logger); items never throw. */
export interface FaultLog {
  error(details: { err: unknown; op: string }, message: string): void;
}

function join(prefix: string, field: string): string {
  if (prefix === '') return field;
  return field === '' ? prefix : `${prefix}.${field}`;
}

/** The error re-addressed to the item: every field gets `prefix.` in front, and the detail says so. */
function prefixed(error: ProblemError, prefix: string): Problem {
  if (!error.errors || prefix === '') return error.toProblem();
  const errors: FieldIssue[] = error.errors.map((e) => ({ ...e, field: join(prefix, e.field) }));
  const detail = errors.map((e) => (e.field ? `${e.field}: ${e.message}` : e.message)).join('; ');
  return new ProblemError(error.kind, detail, { errors }).toProblem();
}

function fail(kind: 'validation' | 'unprocessable', field: string, message: string, hint?: string): ItemOutcome<never> {
  const text = hint ? `${message}; ${hint}` : message;
  return { ok: false, problem: new ProblemError(kind, field ? `${field}: ${text}` : text, { errors: [{ field, message: text, ...(hint ? { hint } : {}) }] }).toProblem() };
}

const ITEM_FIELDS = ['op', 'input'] as const;

/**
 * Runs one batch item `{ op, input }` exactly as its single endpoint would (same schema, same code),
 * but answers a problem instead of throwing, so one bad item never fails the others. Fields in the
 * problem are addressed from the request root: `prefix` is `items.12` in a JSON batch and empty on an
 * NDJSON line. `cables` resolves `cableId`s: the built-in catalog unless the server adds an
 * organisation's own cables.
 */
export function calculateItem(item: unknown, prefix = '', cables: CableLookup = catalogOnly, faults?: FaultLog): ItemOutcome {
  if (item === null || typeof item !== 'object' || Array.isArray(item)) {
    return fail('validation', prefix, 'each item is an object { "op": …, "input": { … } }');
  }
  const { op, input } = item as { op?: unknown; input?: unknown };
  for (const key in item) {
    if (key !== 'op' && key !== 'input') return fail('validation', join(prefix, key), 'unknown field; an item has only "op" and "input"', nearMissHint(key, ITEM_FIELDS));
  }
  const calc = typeof op === 'string' ? calculationNamed(op) : undefined;
  if (!calc) {
    // A path given as the op (`/api/v1/refer`) names its last segment.
    const last = typeof op === 'string' ? op.slice(op.lastIndexOf('/') + 1) : '';
    const hint = typeof op !== 'string' ? undefined : calculationNamed(last) ? `did you mean ${last}?` : nearMissHint(op, CALCULATION_NAMES);
    return fail('validation', join(prefix, 'op'), `op must be one of ${CALCULATION_NAMES.map((o) => `"${o}"`).join(', ')}`, hint);
  }
  const inputPrefix = join(prefix, 'input');
  if (input === undefined) return fail('validation', inputPrefix, `give the body of the ${op} endpoint as input`);
  const parsed = calc.request.safeParse(input);
  if (!parsed.success) {
    const { kind, detail, errors } = zodFailure(parsed.error, 'body', { schema: calc.request, input });
    return { ok: false, problem: prefixed(new ProblemError(kind, detail, { errors }), inputPrefix) };
  }
  try {
    return { ok: true, output: assertFinite(calc.run(parsed.data, cables)) };
  } catch (err) {
    if (err instanceof RfInputError) return fail('unprocessable', join(inputPrefix, err.field), err.message);
    if (err instanceof NonFiniteResultError) return { ok: false, problem: new ProblemError('unprocessable', err.message).toProblem() };
    if (err instanceof ProblemError) return { ok: false, problem: prefixed(err, inputPrefix) };
    faults?.error({ err, op: calc.name }, 'batch item failed unexpectedly');
    return { ok: false, problem: new ProblemError('internal', 'This item could not be computed because of a fault on our side; the others are unaffected. The request id in Request-Id helps us find it.').toProblem() };
  }
}

type CalculationOf<Name extends CalculationName> = Extract<(typeof CALCULATIONS)[number], { name: Name }>;
/** The body a calculation takes (what its POST /api/v1/<op> endpoint takes). */
export type CalculationInput<Name extends CalculationName> = z.input<CalculationOf<Name>['request']>;
/** The body a calculation answers. */
export type CalculationOutput<Name extends CalculationName> = z.input<CalculationOf<Name>['result']>;

/**
 * One calculation `op` (`mismatch`, `reflection`, `line`, `refer`, `match`, `fault-distance`) on its
 * input, answered as a batch item is: `{ ok: true, output }` or `{ ok: false, problem }` with the
 * problem's fields addressed from the item (`op`, `input.line.lengthM`), exactly like a line of an
 * NDJSON batch. Never throws.
 * @example calculate('mismatch', { swr: 1.5 }) // { ok: true, output: { swr: 1.5, reflectionMagnitude: 0.2, … } }
 */
export function calculate<Name extends CalculationName>(op: Name, input: CalculationInput<Name>, cables?: CableLookup): ItemOutcome<CalculationOutput<Name>>;
export function calculate(op: string, input: unknown, cables?: CableLookup): ItemOutcome;
export function calculate(op: string, input: unknown, cables: CableLookup = catalogOnly): ItemOutcome {
  return calculateItem({ op, input }, '', cables);
}
