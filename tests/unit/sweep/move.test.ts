import ComplexJs from 'complex.js';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { RfInputError } from '../../../shared/rf/errors.ts';
import { cascadeLines, lineFromLossSpec, lineFromRlgc, transformLine, type LineModel } from '../../../shared/rf/line.ts';
import { moveSweepThroughLine, type LineAtFrequency, type Sweep, type SweepPointInput } from '../../../shared/sweep/index.ts';
import { dipoleImpedance, DIPOLE_FREQUENCIES_HZ } from './dipole.ts';

const FIFTY = { re: 50, im: 0 };

// An invented feed line: 30 m of generic 50-ohm coax, velocity factor 0.66, 2.5 dB/100 m at 7 MHz.
const coax = (lengthM: number) => (f: number): LineModel =>
  lineFromLossSpec({ impedanceOhm: FIFTY, velocityFactor: 0.66, lossDbPer100m: 2.5, lengthM }, f);
// A 75-ohm jumper with a per-metre model, so sections differ in Z0 (and Z0 is slightly complex).
const jumper = (lengthM: number) => (f: number): LineModel =>
  lineFromRlgc({ rOhmPerM: 0.08, lHPerM: 375e-9, gSPerM: 1e-7, cFPerM: 67e-12 }, lengthM, f);

const dipoleSweep: Sweep = {
  referenceOhm: 50,
  points: DIPOLE_FREQUENCIES_HZ.map((f) => {
    const z = dipoleImpedance(f);
    return { frequencyHz: f, loadOhm: { re: z.re, im: z.im }, reflection: { re: 0, im: 0 } };
  }),
};

function closeZ(a: { re: number; im: number } | null, b: { re: number; im: number } | null, rel: number): void {
  expect(a).not.toBeNull();
  expect(b).not.toBeNull();
  const x = a as { re: number; im: number };
  const y = b as { re: number; im: number };
  expect(Math.hypot(x.re - y.re, x.im - y.im)).toBeLessThanOrEqual(rel * Math.max(1, Math.hypot(y.re, y.im)));
}

describe('moving a sweep towards the transmitter', () => {
  it('agrees with transformLine from shared/rf at every point', () => {
    const moved = moveSweepThroughLine(dipoleSweep, coax(30), 'loadToInput');
    moved.points.forEach((p, i) => {
      const f = p.frequencyHz;
      const expected = transformLine(coax(30)(f), dipoleSweep.points[i]?.loadOhm as { re: number; im: number }, f).inputOhm;
      closeZ(p.loadOhm, expected, 1e-12);
    });
  });

  it('agrees with an independent complex.js re-computation of Zin = Z0·(ZL + Z0·tanh γl)/(Z0 + ZL·tanh γl)', () => {
    const moved = moveSweepThroughLine(dipoleSweep, jumper(12), 'loadToInput');
    moved.points.forEach((p) => {
      const line = jumper(12)(p.frequencyHz);
      const z0 = new ComplexJs(line.characteristicOhm.re, line.characteristicOhm.im);
      const t = new ComplexJs(line.propagationPerM.re, line.propagationPerM.im).mul(line.lengthM).tanh();
      const zl = dipoleImpedance(p.frequencyHz);
      const zin = z0.mul(zl.add(z0.mul(t))).div(z0.add(zl.mul(t)));
      closeZ(p.loadOhm, { re: zin.re, im: zin.im }, 1e-12);
      // Reflections come back against the sweep's reference, 50 ohm.
      const g = zin.sub(50).div(zin.add(50));
      expect(p.reflection.re).toBeCloseTo(g.re, 12);
      expect(p.reflection.im).toBeCloseTo(g.im, 12);
    });
  });

  it('agrees with cascadeLines for a two-section line with a connector loss', () => {
    const line: LineAtFrequency = (f) => [{ ...jumper(2)(f), fixedLossDb: 0.2 }, coax(30)(f)];
    const moved = moveSweepThroughLine(dipoleSweep, line, 'loadToInput');
    moved.points.forEach((p, i) => {
      const expected = cascadeLines([...(line(p.frequencyHz) as LineModel[])], dipoleSweep.points[i]?.loadOhm as { re: number; im: number }, p.frequencyHz).inputOhm;
      closeZ(p.loadOhm, expected, 1e-12);
    });
  });

  it('turns an open circuit at the end of a lossless quarter-wave line into a short (hand calculation)', () => {
    const f = 10e6;
    // Quarter wave at 10 MHz with velocity factor 1: l = c/(4f) = 7.4948 m.
    const quarter = (): LineModel => lineFromLossSpec({ impedanceOhm: FIFTY, velocityFactor: 1, lossDbPer100m: 0, lengthM: 299_792_458 / (4 * f) }, f);
    const moved = moveSweepThroughLine({ referenceOhm: 50, points: [{ frequencyHz: f, loadOhm: null }] }, quarter, 'loadToInput');
    expect(Math.hypot(moved.points[0]?.loadOhm?.re ?? NaN, moved.points[0]?.loadOhm?.im ?? NaN)).toBeLessThan(1e-12);
    expect(moved.points[0]?.reflection.re).toBeCloseTo(-1, 12);
  });
});

describe('moving there and back', () => {
  const passiveLoad = fc.record({
    re: fc.double({ min: 0, max: 2000, noNaN: true }),
    im: fc.double({ min: -2000, max: 2000, noNaN: true }),
  });
  const lossyLine = fc.record({
    z0: fc.double({ min: 25, max: 600, noNaN: true }),
    velocityFactor: fc.double({ min: 0.5, max: 1, noNaN: true }),
    lossDbPer100m: fc.double({ min: 0, max: 10, noNaN: true }),
    lengthM: fc.double({ min: 0, max: 100, noNaN: true }),
    fixedLossDb: fc.double({ min: 0, max: 1, noNaN: true }),
  });
  const frequency = fc.double({ min: 1e5, max: 1e9, noNaN: true });

  it('returns the original points after loadToInput then inputToLoad, for random lossy lines and passive loads', () => {
    fc.assert(
      fc.property(fc.array(lossyLine, { minLength: 1, maxLength: 3 }), passiveLoad, frequency, (sections, load, f) => {
        const line: LineAtFrequency = (hz) =>
          sections.map((s) => ({
            ...lineFromLossSpec({ impedanceOhm: { re: s.z0, im: 0 }, velocityFactor: s.velocityFactor, lossDbPer100m: s.lossDbPer100m, lengthM: s.lengthM }, hz),
            fixedLossDb: s.fixedLossDb,
          }));
        const original = { referenceOhm: 50, points: [{ frequencyHz: f, loadOhm: load }] };
        const there = moveSweepThroughLine(original, line, 'loadToInput');
        const back = moveSweepThroughLine(there, line, 'inputToLoad');
        const g0 = new ComplexJs(load.re, load.im).sub(50).div(new ComplexJs(load.re, load.im).add(50));
        const g1 = back.points[0]?.reflection as { re: number; im: number };
        // Compared as Γ against 50 ohm, which stays well conditioned near opens and shorts.
        expect(Math.hypot(g1.re - g0.re, g1.im - g0.im)).toBeLessThan(1e-9);
      }),
      { numRuns: 300 },
    );
  });

  it('returns an open circuit as an open circuit, or as an impedance whose Γ is 1 within rounding', () => {
    const there = moveSweepThroughLine({ referenceOhm: 50, points: [{ frequencyHz: 7e6, loadOhm: null }] }, coax(30), 'loadToInput');
    const back = moveSweepThroughLine(there, coax(30), 'inputToLoad');
    const g = back.points[0]?.reflection as { re: number; im: number };
    expect(Math.hypot(g.re - 1, g.im)).toBeLessThan(1e-12);
  });
});

describe('line shapes', () => {
  it('treats a zero-length line as the identity, bit for bit', () => {
    for (const direction of ['loadToInput', 'inputToLoad'] as const) {
      const moved = moveSweepThroughLine(dipoleSweep, coax(0), direction);
      moved.points.forEach((p, i) => expect(p.loadOhm).toEqual(dipoleSweep.points[i]?.loadOhm));
    }
  });

  it('moves through two sections the same as through each in turn, in both directions', () => {
    const both: LineAtFrequency = (f) => [coax(20)(f), jumper(3)(f)];
    const together = moveSweepThroughLine(dipoleSweep, both, 'loadToInput');
    // Towards the source the load-end section (the jumper) comes first.
    const inTurn = moveSweepThroughLine(moveSweepThroughLine(dipoleSweep, jumper(3), 'loadToInput'), coax(20), 'loadToInput');
    together.points.forEach((p, i) => closeZ(p.loadOhm, inTurn.points[i]?.loadOhm ?? null, 1e-12));

    const measured = together;
    const back = moveSweepThroughLine(measured, both, 'inputToLoad');
    const backInTurn = moveSweepThroughLine(moveSweepThroughLine(measured, coax(20), 'inputToLoad'), jumper(3), 'inputToLoad');
    back.points.forEach((p, i) => closeZ(p.loadOhm, backInTurn.points[i]?.loadOhm ?? null, 1e-12));
  });

  it('accepts a single LineModel from the factory as a one-section line', () => {
    const single = moveSweepThroughLine(dipoleSweep, coax(30), 'loadToInput');
    const list = moveSweepThroughLine(dipoleSweep, (f) => [coax(30)(f)], 'loadToInput');
    expect(single).toEqual(list);
  });

  it('calls the factory with each point frequency, because γ depends on frequency', () => {
    const asked: number[] = [];
    moveSweepThroughLine(dipoleSweep, (f) => {
      asked.push(f);
      return coax(30)(f);
    }, 'loadToInput');
    expect(asked).toEqual(DIPOLE_FREQUENCIES_HZ);
  });
});

describe('contradictions and bad lines are RfInputErrors', () => {
  it('refuses to de-embed a reading that would need a non-passive antenna, naming the frequency', () => {
    // Hand calculation: |Γ| = 0.9 at the transmitter through 3 dB of matched loss is 0.9·10^(3/10) ≈ 1.80 at the antenna.
    const measured: { referenceOhm: number; points: SweepPointInput[] } = {
      referenceOhm: 50,
      points: [{ frequencyHz: 7.05e6, loadOhm: { re: 50 * 1.9 / 0.1, im: 0 } }],
    };
    const lossy = (f: number): LineModel => lineFromLossSpec({ impedanceOhm: FIFTY, velocityFactor: 0.66, lossDbPer100m: 3, lengthM: 100 }, f);
    let error: unknown;
    try {
      moveSweepThroughLine(measured, lossy, 'inputToLoad');
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(RfInputError);
    expect((error as RfInputError).field).toBe('line');
    expect((error as RfInputError).message).toMatch(/At 7050000 Hz.*\|Γ\| = 1\.79\d*.*cannot both be right/);
  });

  it('de-embeds a pure reactance through a lossless line without a false alarm', () => {
    const lossless = (f: number): LineModel => lineFromLossSpec({ impedanceOhm: FIFTY, velocityFactor: 0.8, lossDbPer100m: 0, lengthM: 13.7 }, f);
    const moved = moveSweepThroughLine({ referenceOhm: 50, points: [{ frequencyHz: 7e6, loadOhm: { re: 0, im: 33 } }] }, lossless, 'inputToLoad');
    expect(Math.abs(moved.points[0]?.loadOhm?.re ?? NaN)).toBeLessThan(1e-9);
  });

  it('refuses an empty line, a bad direction and an amplifying section', () => {
    expect(() => moveSweepThroughLine(dipoleSweep, () => [], 'loadToInput')).toThrow(RfInputError);
    expect(() => moveSweepThroughLine(dipoleSweep, coax(1), 'upstream' as never)).toThrow(/direction must be/);
    const gain = (f: number): LineModel => ({ ...coax(1)(f), propagationPerM: { re: -0.01, im: 1 } });
    expect(() => moveSweepThroughLine(dipoleSweep, gain, 'loadToInput')).toThrow(/cannot amplify/);
  });
});
