import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { findCable } from '../../../shared/rf/cables.ts';
import { DB_PER_NEPER, SPEED_OF_LIGHT_M_PER_S } from '../../../shared/rf/constants.ts';
import { RfInputError } from '../../../shared/rf/errors.ts';
import {
  attenuatorSection,
  cascadeLines,
  lineFromCable,
  lineFromLossSpec,
  lineFromRlgc,
  lineInputImpedance,
  transformLine,
  type LineModel,
} from '../../../shared/rf/line.ts';
import { refInputImpedance, relativeError, toPlain } from '../../helpers/rf-reference.ts';

const Z50 = { re: 50, im: 0 };
const F = 14e6;
const WAVELENGTH_M = SPEED_OF_LIGHT_M_PER_S / F;

function losslessLine(lengthM: number, z0 = Z50): LineModel {
  return lineFromLossSpec({ impedanceOhm: z0, velocityFactor: 1, lossDbPer100m: 0, lengthM }, F);
}

function fieldOf(fn: () => unknown): string | undefined {
  try {
    fn();
  } catch (err) {
    if (err instanceof RfInputError) return err.field;
    throw err;
  }
  return undefined;
}

describe('lossless lines obey the textbook identities', () => {
  // Pozar, Microwave Engineering, §2.3–2.5 (standard results, from memory):
  // quarter wave Zin = Z0²/ZL, half wave Zin = ZL, shorted line Zin = jZ0·tan βl.
  it('turns 100 Ω into 25 Ω through a quarter wave of 50 Ω line', () => {
    const r = transformLine(losslessLine(WAVELENGTH_M / 4), { re: 100, im: 0 }, F);
    expect(relativeError(r.inputOhm, { re: 25, im: 0 })).toBeLessThan(1e-12);
    expect(r.electricalLengthDeg).toBeCloseTo(90, 10);
    expect(r.lengthWavelengths).toBeCloseTo(0.25, 12);
  });

  it('turns a complex load into Z0²/ZL through a quarter wave', () => {
    const zl = { re: 30, im: 40 };
    // 2500/(30 + j40) = 2500·(30 − j40)/2500 = 30 − j40, by hand.
    const r = transformLine(losslessLine(WAVELENGTH_M / 4), zl, F);
    expect(relativeError(r.inputOhm, { re: 30, im: -40 })).toBeLessThan(1e-12);
  });

  it('repeats the load through a half wave', () => {
    const zl = { re: 12, im: -85 };
    const r = transformLine(losslessLine(WAVELENGTH_M / 2), zl, F);
    expect(relativeError(r.inputOhm, zl)).toBeLessThan(1e-12);
  });

  it('turns a short into +j50 Ω through an eighth wave (jZ0·tan 45°)', () => {
    const r = transformLine(losslessLine(WAVELENGTH_M / 8), { re: 0, im: 0 }, F);
    expect(Math.abs(r.inputOhm.re)).toBeLessThan(1e-12);
    expect(r.inputOhm.im).toBeCloseTo(50, 11);
    expect(r.atInput.swr).toBeNull();
    expect(r.totalLossDb).toBeNull();
  });

  it('keeps SWR the same at both ends and has no loss', () => {
    const r = transformLine(losslessLine(3.7), { re: 150, im: 20 }, F);
    expect(r.atInput.swr).toBeCloseTo(r.atLoad.swr as number, 12);
    expect(r.matchedLossDb).toBe(0);
    expect(r.totalLossDb).toBe(0);
  });

  it('shows a matched load as Z0 at any length', () => {
    const r = transformLine(lineFromCable(findCable('rg-58')!, 33, F), Z50, F);
    expect(relativeError(r.inputOhm, Z50)).toBeLessThan(1e-14);
    expect(r.atInput.returnLossDb).toBeNull();
    expect(r.mismatchExtraLossDb as number).toBeCloseTo(0, 12);
  });
});

describe('a zero-length line hands back the load exactly', () => {
  it('returns the very same numbers for a lossy line of length 0', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0, max: 1e5, noNaN: true }),
        fc.double({ min: -1e5, max: 1e5, noNaN: true }),
        fc.double({ min: 0, max: 100, noNaN: true }),
        (re, im, loss) => {
          const line = lineFromLossSpec({ impedanceOhm: { re: 75, im: -2 }, velocityFactor: 0.8, lossDbPer100m: loss, lengthM: 0 }, 7e6);
          const r = transformLine(line, { re, im }, 7e6);
          expect(r.inputOhm).toEqual({ re, im });
          expect(r.matchedLossDb).toBe(0);
        },
      ),
      { numRuns: 300 },
    );
  });
});

describe('lossy lines agree with complex.js evaluating Zin = Z0·(ZL + Z0·tanh γl)/(Z0 + ZL·tanh γl)', () => {
  it('matches for random lines and loads', () => {
    fc.assert(
      fc.property(
        fc.record({
          z0re: fc.double({ min: 10, max: 600, noNaN: true }),
          z0im: fc.double({ min: -5, max: 5, noNaN: true }),
          lossDbPer100m: fc.double({ min: 0, max: 60, noNaN: true }),
          vf: fc.double({ min: 0.5, max: 1, noNaN: true }),
          lengthM: fc.double({ min: 0.01, max: 300, noNaN: true }),
          frequencyHz: fc.double({ min: 1e5, max: 3e9, noNaN: true }),
          zlRe: fc.double({ min: 0, max: 5000, noNaN: true }),
          zlIm: fc.double({ min: -5000, max: 5000, noNaN: true }),
        }),
        (c) => {
          const line = lineFromLossSpec(
            { impedanceOhm: { re: c.z0re, im: c.z0im }, velocityFactor: c.vf, lossDbPer100m: c.lossDbPer100m, lengthM: c.lengthM },
            c.frequencyHz,
          );
          const zl = { re: c.zlRe, im: c.zlIm };
          const expected = refInputImpedance(line.characteristicOhm, line.propagationPerM, line.lengthM, zl);
          fc.pre(Number.isFinite(expected.re) && Number.isFinite(expected.im) && expected.abs() < 1e9);
          // Electrical lengths reach ~2·10⁴ rad here, so phase rounding limits agreement to about 1e-12·|tan| growth.
          expect(relativeError(transformLine(line, zl, c.frequencyHz).inputOhm, toPlain(expected))).toBeLessThan(1e-9);
          expect(lineInputImpedance(line, zl)).toEqual(transformLine(line, zl, c.frequencyHz).inputOhm);
        },
      ),
      { numRuns: 500 },
    );
  });
});

describe('the input-impedance-only path', () => {
  // Identity (property): the sweep path and the full transform give the same Zin bit for bit,
  // including the lossless line ending in a pure reactance, where Re Zin is exactly 0.
  it('agrees with transformLine on lossless lines with reactive and resistive loads', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0, max: 60, noNaN: true }),
        fc.double({ min: 0, max: 500, noNaN: true }),
        fc.double({ min: -2000, max: 2000, noNaN: true }),
        (lengthM, zlRe, zlIm) => {
          const line = losslessLine(lengthM);
          for (const zl of [{ re: zlRe, im: zlIm }, { re: 0, im: zlIm }]) {
            let expected: unknown;
            try {
              expected = transformLine(line, zl, F).inputOhm;
            } catch (err) {
              expected = err;
            }
            if (expected instanceof Error) expect(() => lineInputImpedance(line, zl)).toThrow(expected.message);
            else expect(lineInputImpedance(line, zl)).toEqual(expected);
          }
        },
      ),
      { numRuns: 500 },
    );
  });
});

describe('line models follow their definitions', () => {
  it('turns a datasheet loss into α in Np/m and VF into β (1 Np = 8.686 dB, IEC 60027-3)', () => {
    const line = lineFromLossSpec({ impedanceOhm: Z50, velocityFactor: 0.66, lossDbPer100m: 8.686, lengthM: 100 }, 10e6);
    expect(line.propagationPerM.re * 100).toBeCloseTo(8.686 / DB_PER_NEPER, 14);
    expect(line.propagationPerM.im).toBeCloseTo((2 * Math.PI * 10e6) / (0.66 * SPEED_OF_LIGHT_M_PER_S), 14);
    expect(transformLine(line, Z50, 10e6).matchedLossDb).toBeCloseTo(8.686, 12);
  });

  it('gives the low-loss attenuation α ≈ R/(2Z0) + G·Z0/2 for an RLGC line (Pozar §2.7 low-loss approximation)', () => {
    // R = 0.02 Ω/m, G = 1e-6 S/m, Z0 = √(L/C) = 50 Ω: α ≈ 2e-4 + 2.5e-5 = 2.25e-4 Np/m at 100 MHz,
    // where R ≪ ωL and G ≪ ωC make the approximation good to ~1e-6 relative.
    const line = lineFromRlgc({ rOhmPerM: 0.02, lHPerM: 250e-9, gSPerM: 1e-6, cFPerM: 100e-12 }, 10, 100e6);
    expect(line.propagationPerM.re).toBeCloseTo(2.25e-4, 9);
    expect(line.characteristicOhm.re).toBeCloseTo(50, 3);
  });

  it('keeps the attenuation of a lossless RLGC line exactly 0', () => {
    const line = lineFromRlgc({ rOhmPerM: 0, lHPerM: 1e-6, gSPerM: 0, cFPerM: 1e-11 }, 3, 50e6);
    expect(line.propagationPerM.re).toBe(0);
    expect(line.characteristicOhm.im).toBe(0);
  });

  it('carries a catalog cable’s rating and designation', () => {
    const line = lineFromCable(findCable('rg-213')!, 30, 14e6);
    expect(line.label).toBe('RG-213/U');
    expect(line.maxVoltageRmsV).toBe(5000);
    expect(line.characteristicOhm).toEqual(Z50);
  });
});

describe('a fixed-loss section behaves as a matched pad of zero length', () => {
  it('adds twice its loss to the return loss (common practice: a pad of L dB improves return loss by 2L dB)', () => {
    const pad = attenuatorSection(3, Z50);
    const r = transformLine(pad, { re: 150, im: 0 }, F);
    expect(r.atInput.returnLossDb as number).toBeCloseTo((r.atLoad.returnLossDb as number) + 6, 12);
    expect(r.matchedLossDb).toBeCloseTo(3, 14);
    expect(r.electricalLengthDeg).toBe(0);
  });

  it('passes a matched load through with only its insertion loss', () => {
    const r = transformLine(attenuatorSection(0.25, Z50), Z50, F, 100);
    expect(r.power?.loadW).toBeCloseTo(100 * 10 ** -0.025, 12);
    expect(r.totalLossDb).toBeCloseTo(0.25, 12);
  });
});

describe('impossible line inputs are rejected with the field named', () => {
  const good = { impedanceOhm: Z50, velocityFactor: 0.66, lossDbPer100m: 3, lengthM: 10 };
  it.each([
    ['a zero frequency', () => lineFromLossSpec(good, 0), 'frequencyHz'],
    ['a velocity factor above 1', () => lineFromLossSpec({ ...good, velocityFactor: 1.2 }, F), 'line.velocityFactor'],
    ['a velocity factor of 0', () => lineFromLossSpec({ ...good, velocityFactor: 0 }, F), 'line.velocityFactor'],
    ['a negative loss', () => lineFromLossSpec({ ...good, lossDbPer100m: -1 }, F), 'line.lossDbPer100m'],
    ['a negative length', () => lineFromLossSpec({ ...good, lengthM: -1 }, F), 'line.lengthM'],
    ['a Z0 without resistance', () => lineFromLossSpec({ ...good, impedanceOhm: { re: 0, im: 50 } }, F), 'line.impedanceOhm'],
    ['a negative R', () => lineFromRlgc({ rOhmPerM: -1, lHPerM: 1e-7, gSPerM: 0, cFPerM: 1e-10 }, 1, F), 'line.rOhmPerM'],
    ['a zero L', () => lineFromRlgc({ rOhmPerM: 0, lHPerM: 0, gSPerM: 0, cFPerM: 1e-10 }, 1, F), 'line.lHPerM'],
    ['a negative G', () => lineFromRlgc({ rOhmPerM: 0, lHPerM: 1e-7, gSPerM: -1, cFPerM: 1e-10 }, 1, F), 'line.gSPerM'],
    ['a zero C', () => lineFromRlgc({ rOhmPerM: 0, lHPerM: 1e-7, gSPerM: 0, cFPerM: 0 }, 1, F), 'line.cFPerM'],
    ['a negative load resistance', () => transformLine(losslessLine(1), { re: -5, im: 0 }, F), 'loadOhm'],
    ['a negative power', () => transformLine(losslessLine(1), Z50, F, -1), 'powerW'],
    ['a negative frequency in the transform', () => transformLine(losslessLine(1), Z50, -F), 'frequencyHz'],
    ['a gain instead of a loss', () => transformLine({ characteristicOhm: Z50, propagationPerM: { re: -0.1, im: 1 }, lengthM: 1 }, Z50, F), 'line.propagationPerM'],
    ['power into a pure reactance through a lossless line', () => transformLine(losslessLine(2), { re: 0, im: 30 }, F, 10), 'powerW'],
    ['an empty cascade', () => cascadeLines([], Z50, F), 'sections'],
    ['a bad second section', () => cascadeLines([losslessLine(1), { ...losslessLine(1), lengthM: -2 }], Z50, F), 'sections.1.lengthM'],
    ['a negative insertion loss', () => attenuatorSection(-1, Z50), 'line.insertionLossDb'],
  ] as const)('rejects %s', (_name, fn, field) => {
    expect(fieldOf(fn)).toBe(field);
  });

  it('accepts zero power into a pure reactance', () => {
    const r = transformLine(losslessLine(2), { re: 0, im: 30 }, F, 0);
    expect(r.power).toEqual({ inputW: 0, loadW: 0, lineDissipationW: 0 });
  });
});
