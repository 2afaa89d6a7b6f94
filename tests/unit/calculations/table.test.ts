import { describe, expect, it } from 'vitest';
import { catalogOnly } from '../../../shared/calculations/cable-lookup.ts';
import { assertFinite, NonFiniteResultError } from '../../../shared/calculations/finite.ts';
import { CALCULATION_NAMES, CALCULATIONS, calculationNamed, type Calculation } from '../../../shared/calculations/table.ts';
import { reflectionSamples } from '../../../shared/sweep/fault-distance.ts';

describe('the calculations table', () => {
  it('names each calculation once, with a unique camelCase operationId', () => {
    expect(new Set(CALCULATION_NAMES).size).toBe(CALCULATIONS.length);
    const ids = CALCULATIONS.map((c) => c.operationId);
    expect(new Set(ids).size).toBe(ids.length);
    for (const id of ids) expect(id).toMatch(/^[a-z][A-Za-z]+$/);
  });

  it('finds an entry by its name and nothing by a path or an unknown name', () => {
    for (const c of CALCULATIONS) expect(calculationNamed(c.name)).toBe(c);
    expect(calculationNamed('/api/v1/line')).toBeUndefined();
    expect(calculationNamed('toString')).toBeUndefined();
  });

  it.each((CALCULATIONS as readonly Calculation[]).map((c) => [c.name, c] as const))('%s answers its documented example with a result its schema accepts', (_name, calc) => {
    const example = (calc.request.meta() as { example?: unknown } | undefined)?.example;
    const result = assertFinite(calc.run(calc.request.parse(example), catalogOnly));
    expect(calc.result.safeParse(result).success).toBe(true);
  });
});

describe('assertFinite', () => {
  it('passes finite values and null through unchanged', () => {
    const value = { a: 1, b: [2, null, { c: -0 }], d: 'x' };
    expect(assertFinite(value)).toBe(value);
  });

  it('refuses an infinity or NaN anywhere in the result', () => {
    expect(() => assertFinite({ a: [1, { b: Number.POSITIVE_INFINITY }] })).toThrow(NonFiniteResultError);
    expect(() => assertFinite({ a: Number.NaN })).toThrow(NonFiniteResultError);
  });
});

describe('reflectionSamples', () => {
  it('takes Γ as given, converts an impedance in either form, and reads an open circuit as Γ = 1', () => {
    // Γ = (75 − 50)/(75 + 50) = 0.2 (definition of the reflection coefficient).
    const samples = reflectionSamples(
      [
        { frequencyHz: 1, reflection: { re: 0.1, im: -0.3 } },
        { frequencyHz: 2, loadOhm: 75 },
        { frequencyHz: 3, loadOhm: { re: 75, im: 0 } },
        { frequencyHz: 4, loadOhm: null },
      ],
      50,
    );
    expect(samples.map((s) => s.reflection)).toEqual([{ re: 0.1, im: -0.3 }, { re: 0.2, im: 0 }, { re: 0.2, im: 0 }, { re: 1, im: 0 }]);
  });

  it('names the point whose load has no reflection coefficient', () => {
    expect(() => reflectionSamples([{ frequencyHz: 1, loadOhm: 50 }, { frequencyHz: 2, loadOhm: -50 }], 50)).toThrow(expect.objectContaining({ field: 'points.1.loadOhm' }));
  });
});
