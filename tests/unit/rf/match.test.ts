import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { RfInputError } from '../../../shared/rf/errors.ts';
import { lNetworkSolutions } from '../../../shared/rf/match.ts';
import { refLadderInput, relativeError, toPlain } from '../../helpers/rf-reference.ts';

function fieldOf(fn: () => unknown): string | undefined {
  try {
    fn();
  } catch (err) {
    if (err instanceof RfInputError) return err.field;
    throw err;
  }
  return undefined;
}

describe('the classic worked example', () => {
  // Pozar, Microwave Engineering, Example 5.1 (numbers from memory): match ZL = 200 − j100 Ω to a
  // 100 Ω line at 500 MHz. Since RL > Z0 only the shunt-at-load network exists; the book gives
  // B = 0.0029 S, X = 122.5 Ω (C = 0.92 pF, L = 38.8 nH) and B = −0.0069 S, X = −122.5 Ω
  // (L = 46.1 nH, C = 2.61 pF). Susceptance and reactance are checked to the printed digits;
  // component values within 1 % because X/ω = 38.99 nH and −1/(ωX) = 2.60 pF round differently in print.
  const solutions = lNetworkSolutions({ re: 200, im: -100 }, { re: 100, im: 0 }, 500e6);

  it('finds exactly the two shunt-at-load networks', () => {
    expect(solutions).toHaveLength(2);
    for (const s of solutions) expect(s.topology).toBe('shuntAtLoad');
  });

  it('gives B = 0.0029 S with X = 122.5 Ω, a 0.92 pF shunt capacitor and a 38.8 nH series inductor', () => {
    const s = solutions.find((x) => x.elements[1]?.kind === 'capacitor')!;
    const [series, shunt] = s.elements;
    expect(series?.position).toBe('series');
    expect(Math.abs(-1 / (shunt?.reactanceOhm as number) - 0.0029)).toBeLessThan(0.00005);
    expect(Math.abs((series?.reactanceOhm as number) - 122.5)).toBeLessThan(0.05);
    expect(Math.abs((shunt?.valueF as number) / 0.92e-12 - 1)).toBeLessThan(0.01);
    expect(Math.abs((series?.valueH as number) / 38.8e-9 - 1)).toBeLessThan(0.01);
  });

  it('gives B = −0.0069 S with X = −122.5 Ω, a 46.1 nH shunt inductor and a 2.61 pF series capacitor', () => {
    const s = solutions.find((x) => x.elements[1]?.kind === 'inductor')!;
    const [series, shunt] = s.elements;
    expect(Math.abs(-1 / (shunt?.reactanceOhm as number) + 0.0069)).toBeLessThan(0.00005);
    expect(Math.abs((series?.reactanceOhm as number) + 122.5)).toBeLessThan(0.05);
    expect(Math.abs((shunt?.valueH as number) / 46.1e-9 - 1)).toBeLessThan(0.01);
    expect(Math.abs((series?.valueF as number) / 2.61e-12 - 1)).toBeLessThan(0.01);
  });
});

describe('every solution really matches, re-verified with complex.js', () => {
  it('brings random passive loads to the conjugate of random sources', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.5, max: 5000, noNaN: true }),
        fc.double({ min: -5000, max: 5000, noNaN: true }),
        fc.double({ min: 5, max: 600, noNaN: true }),
        fc.double({ min: -100, max: 100, noNaN: true }),
        fc.double({ min: 1e5, max: 3e9, noNaN: true }),
        (rl, xl, rs, xs, f) => {
          const zl = { re: rl, im: xl };
          const target = { re: rs, im: -xs };
          const solutions = lNetworkSolutions(zl, { re: rs, im: xs }, f);
          // An L-network exists for every load with resistance: if the shunt-at-load condition fails the
          // series-at-load one holds (common practice; follows from the two existence conditions).
          expect(solutions.length).toBeGreaterThanOrEqual(1);
          expect(solutions.length).toBeLessThanOrEqual(4);
          const w = 2 * Math.PI * f;
          // 1e-7: the steepest networks here (5 kΩ loads onto 5 Ω) have a loaded Q near 30, and the
          // element reactances then cancel to within a part in ~1e3 of each other at the input.
          for (const s of solutions) {
            const independent = toPlain(refLadderInput(s.elements, zl));
            expect(relativeError(independent, target)).toBeLessThan(1e-7);
            expect(relativeError(s.inputOhm, target)).toBeLessThan(1e-7);
            for (const e of s.elements) {
              // Series L: X = ωL; series C: X = −1/(ωC); shunt C: B = ωC; shunt L: B = −1/(ωL), with X = −1/B.
              const x = e.kind === 'inductor' ? w * (e.valueH as number) : -1 / (w * (e.valueF as number));
              expect(x / e.reactanceOhm).toBeCloseTo(1, 9);
              expect((e.valueH ?? e.valueF) as number).toBeGreaterThan(0);
            }
          }
        },
      ),
      { numRuns: 400 },
    );
  });

  it('lists elements from the source toward the load', () => {
    for (const s of lNetworkSolutions({ re: 10, im: 5 }, { re: 50, im: 0 }, 14e6)) {
      expect(s.topology).toBe('seriesAtLoad');
      expect(s.elements.map((e) => e.position)).toEqual(['shunt', 'series']);
    }
  });
});

describe('degenerate loads', () => {
  it('gives one empty network for a load that is already matched', () => {
    const solutions = lNetworkSolutions({ re: 50, im: 0 }, { re: 50, im: 0 }, 7e6);
    expect(solutions).toHaveLength(1);
    expect(solutions[0]?.elements).toEqual([]);
    expect(solutions[0]?.inputOhm).toEqual({ re: 50, im: 0 });
  });

  it('needs one element for a load on the unit-resistance circle: 50 + j30 on 50 Ω takes a 30 Ω series capacitor', () => {
    const solutions = lNetworkSolutions({ re: 50, im: 30 }, { re: 50, im: 0 }, 7e6);
    const single = solutions.filter((s) => s.elements.length === 1);
    expect(single).toHaveLength(1);
    expect(single[0]?.elements[0]).toMatchObject({ position: 'series', kind: 'capacitor' });
    expect(single[0]?.elements[0]?.reactanceOhm).toBeCloseTo(-30, 10);
  });

  it('gives no network for a purely reactive load, which cannot absorb power', () => {
    expect(lNetworkSolutions({ re: 0, im: 40 }, { re: 50, im: 0 }, 7e6)).toEqual([]);
  });

  it.each([
    ['a source without resistance', () => lNetworkSolutions({ re: 10, im: 0 }, { re: 0, im: 0 }, 7e6), 'sourceOhm'],
    ['a negative load resistance', () => lNetworkSolutions({ re: -10, im: 0 }, { re: 50, im: 0 }, 7e6), 'loadOhm'],
    ['a zero frequency', () => lNetworkSolutions({ re: 10, im: 0 }, { re: 50, im: 0 }, 0), 'frequencyHz'],
  ] as const)('rejects %s', (_name, fn, field) => {
    expect(fieldOf(fn)).toBe(field);
  });
});
