import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { cascadeLines, lineFromLossSpec, lineFromRlgc, transformLine } from '../../../shared/rf/line.ts';
import { mismatch, reflectionMagnitudeFrom } from '../../../shared/rf/mismatch.ts';
import { reflectionCoefficient } from '../../../shared/rf/reflection.ts';
import { referReading } from '../../../shared/rf/refer.ts';

// Properties that follow from the definitions themselves (common practice); fast-check explores inputs.

const load = fc.record({ re: fc.double({ min: 0, max: 2000, noNaN: true }), im: fc.double({ min: -2000, max: 2000, noNaN: true }) });
const lossSpecLine = fc.record({
  z0: fc.double({ min: 25, max: 600, noNaN: true }),
  vf: fc.double({ min: 0.6, max: 1, noNaN: true }),
  loss: fc.double({ min: 0, max: 30, noNaN: true }),
  lengthM: fc.double({ min: 0, max: 80, noNaN: true }),
});
const frequency = fc.double({ min: 1e6, max: 500e6, noNaN: true });

describe('conversions round-trip', () => {
  it('takes SWR → |Γ| → SWR back to the start', () => {
    fc.assert(
      fc.property(fc.double({ min: 1, max: 1e6, noNaN: true }), (swr) => {
        const rho = reflectionMagnitudeFrom({ swr });
        const back = mismatch({ reflectionMagnitude: rho }).swr as number;
        expect(Math.abs(back - swr) / swr).toBeLessThan(1e-9 * swr);
      }),
    );
  });

  it('takes return loss → |Γ| → return loss back to the start', () => {
    fc.assert(
      fc.property(fc.double({ min: 1e-6, max: 200, noNaN: true }), (rl) => {
        const back = mismatch({ reflectionMagnitude: reflectionMagnitudeFrom({ returnLossDb: rl }) }).returnLossDb as number;
        expect(back).toBeCloseTo(rl, 10);
      }),
    );
  });

  it('takes mismatch loss → |Γ| → mismatch loss back to the start', () => {
    fc.assert(
      fc.property(fc.double({ min: 0, max: 30, noNaN: true }), (ml) => {
        const back = mismatch({ reflectionMagnitude: reflectionMagnitudeFrom({ mismatchLossDb: ml }) }).mismatchLossDb as number;
        expect(Math.abs(back - ml)).toBeLessThan(1e-9 * Math.max(1, ml));
      }),
    );
  });
});

describe('physical bounds hold', () => {
  it('keeps |Γ| within 1 for every passive load on a real Z0', () => {
    fc.assert(
      fc.property(load, fc.double({ min: 1, max: 1000, noNaN: true }), (zl, z0) => {
        fc.pre(zl.re + z0 > 0);
        const g = reflectionCoefficient(zl, { re: z0, im: 0 });
        expect(Math.hypot(g.re, g.im)).toBeLessThanOrEqual(1 + 1e-15);
      }),
    );
  });

  it('conserves power on every line: Pin = Pload + dissipation, with dissipation ≥ 0', () => {
    fc.assert(
      fc.property(lossSpecLine, load, frequency, fc.double({ min: 0, max: 5000, noNaN: true }), (l, zl, f, p) => {
        fc.pre(zl.re > 1e-3);
        const line = lineFromLossSpec({ impedanceOhm: { re: l.z0, im: 0 }, velocityFactor: l.vf, lossDbPer100m: l.loss, lengthM: l.lengthM }, f);
        const r = transformLine(line, zl, f, p);
        expect(r.power!.inputW).toBe(p);
        expect(r.power!.loadW + r.power!.lineDissipationW).toBeCloseTo(p, 9);
        // Rounding acts on the forward and reflected waves, not on their small difference: near total
        // reflection the forward power p/(1 − |Γ|²) sets the scale of the round-off (numerical analysis, common practice).
        const rho = r.atLoad.reflection.magnitude;
        const forwardScale = p / Math.max(1e-300, 1 - rho * rho);
        expect(r.power!.lineDissipationW).toBeGreaterThanOrEqual(-1e-12 * forwardScale);
        expect(r.power!.loadW).toBeLessThanOrEqual(p + 1e-12 * forwardScale);
      }),
      { numRuns: 200 },
    );
  });

  it('dissipates power in every RLGC line with loss, complex Z0 included', () => {
    fc.assert(
      fc.property(
        fc.oneof(fc.constant(0), fc.double({ min: 1e-4, max: 1, noNaN: true })),
        fc.oneof(fc.constant(0), fc.double({ min: 1e-8, max: 1e-3, noNaN: true })),
        fc.double({ min: 1e4, max: 1e8, noNaN: true }),
        load,
        (r, g, f, zl) => {
          fc.pre(zl.re > 1e-3 && (r > 0 || g > 0));
          const line = lineFromRlgc({ rOhmPerM: r, lHPerM: 250e-9, gSPerM: g, cFPerM: 100e-12 }, 20, f);
          const res = transformLine(line, zl, f, 100);
          expect(res.power!.lineDissipationW).toBeGreaterThan(0);
          // Not total ≥ matched: with a complex Z0 a slightly mismatched load can lose less than Z0 itself.
          expect(res.totalLossDb as number).toBeGreaterThan(0);
        },
      ),
      { numRuns: 200 },
    );
  });
});

describe('lines compose', () => {
  it('gives for two sections in cascade what applying them in turn gives', () => {
    fc.assert(
      fc.property(lossSpecLine, lossSpecLine, load, frequency, (a, b, zl, f) => {
        fc.pre(zl.re > 1e-3);
        const la = lineFromLossSpec({ impedanceOhm: { re: a.z0, im: 0 }, velocityFactor: a.vf, lossDbPer100m: a.loss, lengthM: a.lengthM }, f);
        const lb = lineFromLossSpec({ impedanceOhm: { re: b.z0, im: 0 }, velocityFactor: b.vf, lossDbPer100m: b.loss, lengthM: b.lengthM }, f);
        const both = cascadeLines([la, lb], zl, f, 100);
        const inner = transformLine(lb, zl, f);
        const outer = transformLine(la, inner.inputOhm, f, 100);
        expect(both.inputOhm).toEqual(outer.inputOhm);
        expect(both.power!.loadW).toBeCloseTo(transformLine(lb, zl, f, outer.power!.loadW).power!.loadW, 9);
        expect(both.matchedLossDb).toBeCloseTo(inner.matchedLossDb + outer.matchedLossDb, 12);
      }),
      { numRuns: 200 },
    );
  });

  it('returns the load from a zero-length line, bit for bit', () => {
    fc.assert(
      fc.property(lossSpecLine, load, frequency, (l, zl, f) => {
        const line = lineFromLossSpec({ impedanceOhm: { re: l.z0, im: 0 }, velocityFactor: l.vf, lossDbPer100m: l.loss, lengthM: 0 }, f);
        expect(transformLine(line, zl, f).inputOhm).toEqual(zl);
      }),
    );
  });
});

describe('referral is reversible', () => {
  it('brings an SWR referred to the load and back to where it started', () => {
    fc.assert(
      fc.property(fc.double({ min: 0, max: 20, noNaN: true }), fc.double({ min: 1, max: 100, noNaN: true }), (ml, swr) => {
        const there = referReading({ matchedLossDb: ml, direction: 'loadToInput', reading: { swr } });
        const back = referReading({ matchedLossDb: ml, direction: 'inputToLoad', reading: { swr: there.atInput.swr as number } });
        expect(Math.abs((back.atLoad.swr as number) - swr) / swr).toBeLessThan(1e-9 * swr);
      }),
    );
  });

  it('brings powers referred to the source and back to where they started', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0, max: 20, noNaN: true }),
        fc.double({ min: 0.001, max: 1e4, noNaN: true }),
        fc.double({ min: 0, max: 1, noNaN: true }),
        (ml, pf, fraction) => {
          const pr = pf * fraction;
          const there = referReading({ matchedLossDb: ml, direction: 'loadToInput', reading: { forwardPowerW: pf, reflectedPowerW: pr } });
          const back = referReading({
            matchedLossDb: ml,
            direction: 'inputToLoad',
            reading: { forwardPowerW: there.atInput.forwardPowerW as number, reflectedPowerW: there.atInput.reflectedPowerW as number },
          });
          expect(back.atLoad.forwardPowerW as number).toBeCloseTo(pf, 9);
          expect(Math.abs((back.atLoad.reflectedPowerW as number) - pr)).toBeLessThanOrEqual(1e-12 * pf);
        },
      ),
    );
  });
});
