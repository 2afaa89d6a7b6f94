import { describe, expect, it } from 'vitest';
import { calculate, calculateItem } from '../../../shared/calculations/calculate.ts';
import { catalogOnly } from '../../../shared/calculations/cable-lookup.ts';
import { findCable } from '../../../shared/rf/cables.ts';

// The one evaluation of a batch item, shared by the server's batches and @gammaline/calc.
// tests/integration/offline-package.test.ts compares it with the API on generated items.

describe('calculate answers an item as data', () => {
  it('gives the output of a computable input', () => {
    const answer = calculate('mismatch', { swr: 3 });
    expect(answer.ok && answer.output.reflectionMagnitude).toBeCloseTo(0.5, 12); // |Γ| = (3 − 1)/(3 + 1), common practice
  });

  it('addresses problem fields from the item, as on an NDJSON line, and from a prefix as in a JSON batch', () => {
    expect(calculate('mismatch', { swr: 0.5 })).toEqual({
      ok: false,
      problem: expect.objectContaining({ status: 422, errors: [{ field: 'input.swr', message: 'Too small: expected number to be >=1' }] }),
    });
    expect(calculateItem({ op: 'mismatch', input: { swr: 0.5 } }, 'items.7')).toEqual({
      ok: false,
      problem: expect.objectContaining({ detail: 'items.7.input.swr: Too small: expected number to be >=1' }),
    });
  });

  it('answers an unknown op with a 400 naming the ops and the one probably meant', () => {
    const answer = calculate('/api/v1/refer', {});
    expect(answer).toEqual({ ok: false, problem: expect.objectContaining({ type: 'urn:gammaline:problem:validation', status: 400, errors: [expect.objectContaining({ field: 'op', hint: 'did you mean refer?' })] }) });
  });

  it('knows only the cables it is given: an id outside them is a 422 on the cableId', () => {
    const input = { frequencyHz: 14_200_000, line: { cableId: 'account-mast-run', lengthM: 30 }, loadOhm: 50 };
    expect(calculate('line', input)).toMatchObject({ ok: false, problem: { status: 422, errors: [{ field: 'input.line.cableId' }] } });
    const withAccount = { findCable: (id: string) => (id === 'account-mast-run' ? findCable('rg-213') : catalogOnly.findCable(id)) };
    expect(calculate('line', input, withAccount)).toMatchObject({ ok: true });
  });

  it('never throws, whatever the item', () => {
    for (const item of [null, 42, [], { op: 'line' }, { op: 'line', input: null, extra: 1 }, { op: 7, input: {} }]) {
      expect(calculateItem(item).ok).toBe(false);
    }
  });
});
