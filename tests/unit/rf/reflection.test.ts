import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  impedanceFromReflection,
  powerWaveReflection,
  reflectionCoefficient,
  reflectionReport,
  reflectionReportFromGamma,
} from '../../../shared/rf/reflection.ts';
import { RfInputError } from '../../../shared/rf/errors.ts';
import { refGamma, refPowerWave, relativeError, toPlain } from '../../helpers/rf-reference.ts';

const Z50 = { re: 50, im: 0 };

function fieldOf(fn: () => unknown): string | undefined {
  try {
    fn();
  } catch (err) {
    if (err instanceof RfInputError) return err.field;
    throw err;
  }
  return undefined;
}

const passiveLoad = fc.record({
  re: fc.double({ min: 0, max: 1e4, noNaN: true }),
  im: fc.double({ min: -1e4, max: 1e4, noNaN: true }),
});
const reference = fc.record({
  re: fc.double({ min: 1, max: 1000, noNaN: true }),
  im: fc.double({ min: -500, max: 500, noNaN: true }),
});

describe('reflection coefficients match worked examples', () => {
  it('gives Γ = 0.4 + j0.2 for 100 + j50 Ω on 50 Ω', () => {
    // Common textbook exercise; by hand: (50 + j50)/(150 + j50) = (50 + j50)(150 − j50)/25000
    // = (10000 + j5000)/25000. |Γ| = 0.4472, SWR = 1.4472/0.5528 = 2.618.
    const g = reflectionCoefficient({ re: 100, im: 50 }, Z50);
    expect(g.re).toBeCloseTo(0.4, 15);
    expect(g.im).toBeCloseTo(0.2, 15);
    const report = reflectionReport({ re: 100, im: 50 }, Z50);
    expect(report.reflection.magnitude).toBeCloseTo(Math.sqrt(0.2), 15);
    expect(report.reflection.angleDeg).toBeCloseTo((Math.atan(0.5) * 180) / Math.PI, 12);
    expect(report.swr).toBeCloseTo(2.618, 3);
  });

  it('gives Γ = +0.2 for 75 Ω and −1/3 for 25 Ω on 50 Ω (common practice: SWR 1.5 and 2 for resistive loads)', () => {
    expect(reflectionCoefficient({ re: 75, im: 0 }, Z50).re).toBeCloseTo(0.2, 15);
    expect(reflectionCoefficient({ re: 25, im: 0 }, Z50).re).toBeCloseTo(-1 / 3, 15);
    expect(reflectionReport({ re: 25, im: 0 }, Z50).swr).toBeCloseTo(2, 14);
  });

  it('gives Γ = −1 for a short, with a null SWR and a null admittance', () => {
    const report = reflectionReport({ re: 0, im: 0 }, Z50);
    expect(report.reflection.re).toBe(-1);
    expect(report.reflection.angleDeg).toBe(180);
    expect(report.swr).toBeNull();
    expect(report.mismatchLossDb).toBeNull();
    expect(report.admittanceS).toBeNull();
  });

  it('gives 1/ZL as the admittance', () => {
    const report = reflectionReport({ re: 30, im: 40 }, Z50);
    // 1/(30 + j40) = (30 − j40)/2500, by hand.
    expect(report.admittanceS?.re).toBeCloseTo(0.012, 15);
    expect(report.admittanceS?.im).toBeCloseTo(-0.016, 15);
  });
});

describe('reflection agrees with an independent complex.js re-computation', () => {
  it('matches Γ and the power-wave reflection for random passive loads and complex references', () => {
    fc.assert(
      fc.property(passiveLoad, reference, (zl, z0) => {
        expect(relativeError(reflectionCoefficient(zl, z0), toPlain(refGamma(zl, z0)))).toBeLessThan(1e-13);
        expect(relativeError(powerWaveReflection(zl, z0), toPlain(refPowerWave(zl, z0)))).toBeLessThan(1e-13);
      }),
      { numRuns: 500 },
    );
  });

  it('keeps the power-wave magnitude within 1 for every passive load, even with a complex reference (Kurokawa 1965)', () => {
    fc.assert(
      fc.property(passiveLoad, reference, (zl, z0) => {
        const report = reflectionReport(zl, z0);
        expect(report.powerWaveReflection.magnitude).toBeLessThanOrEqual(1 + 1e-15);
        // Kurokawa's |s|² = 1 − 4·RL·R0/|ZL + Z0|²: the delivered fraction of the available power.
        const sum = Math.hypot(zl.re + z0.re, zl.im + z0.im);
        expect(report.transmittedPowerRatio).toBeCloseTo((4 * zl.re * z0.re) / (sum * sum), 12);
      }),
      { numRuns: 500 },
    );
  });

  it('shows |Γ| above 1 but |s| = 1 for a reactance on a complex reference, the case power waves exist for', () => {
    // By hand: Z0 = 50 − j50, ZL = j50: Γ = (−50 + j100)/50 = −1 + j2; s = (j50 − 50 − j50)/50 = −1.
    const report = reflectionReport({ re: 0, im: 50 }, { re: 50, im: -50 });
    expect(report.reflection.magnitude).toBeCloseTo(Math.sqrt(5), 14);
    expect(report.powerWaveReflection.re).toBeCloseTo(-1, 15);
    expect(report.swr).toBeNull();
  });

  it('gives zero power-wave reflection for a conjugate match', () => {
    const report = reflectionReport({ re: 30, im: 20 }, { re: 30, im: -20 });
    expect(report.powerWaveReflection.magnitude).toBe(0);
    expect(report.returnLossDb).toBeNull();
    expect(report.reflection.magnitude).toBeGreaterThan(0);
  });
});

describe('the inverse recovers the load', () => {
  it('round-trips Z → Γ → Z for random passive loads', () => {
    fc.assert(
      fc.property(passiveLoad, reference, (zl, z0) => {
        fc.pre(Math.hypot(zl.re, zl.im) > 1e-3);
        const back = impedanceFromReflection(reflectionCoefficient(zl, z0), z0);
        expect(back).not.toBeNull();
        expect(relativeError(back as { re: number; im: number }, zl)).toBeLessThan(1e-9);
      }),
      { numRuns: 500 },
    );
  });

  it('gives 75 Ω for Γ = 0.2 on 50 Ω (common practice)', () => {
    const report = reflectionReportFromGamma({ re: 0.2, im: 0 }, Z50);
    expect(report.loadOhm?.re).toBeCloseTo(75, 13);
    expect(report.loadOhm?.im).toBe(0);
    expect(report.swr).toBeCloseTo(1.5, 14);
  });

  it('gives a null load and zero admittance for Γ = 1 (open circuit)', () => {
    expect(impedanceFromReflection({ re: 1, im: 0 }, Z50)).toBeNull();
    const report = reflectionReportFromGamma({ re: 1, im: 0 }, Z50);
    expect(report.loadOhm).toBeNull();
    expect(report.admittanceS).toEqual({ re: 0, im: 0 });
    expect(report.swr).toBeNull();
    expect(report.returnLossDb).toBe(0);
  });

  it('gives a pure reactance for any Γ on the unit circle of a real reference', () => {
    const report = reflectionReportFromGamma({ re: 0, im: 1 }, Z50);
    // Z = 50(1 + j)/(1 − j) = j50, by hand.
    expect(report.loadOhm?.re).toBe(0);
    expect(report.loadOhm?.im).toBeCloseTo(50, 12);
  });

  it('accepts |Γ| above 1 when the reference is complex and the load is passive', () => {
    const report = reflectionReportFromGamma({ re: -1, im: 2 }, { re: 50, im: -50 });
    expect(report.loadOhm?.re).toBeCloseTo(0, 10);
    expect(report.loadOhm?.im).toBeCloseTo(50, 10);
  });
});

describe('impossible reflection inputs are rejected with the field named', () => {
  it("rejects a negative load resistance on 'loadOhm'", () => {
    expect(fieldOf(() => reflectionReport({ re: -1, im: 0 }, Z50))).toBe('loadOhm');
  });

  it("rejects a reference without resistance on 'referenceOhm'", () => {
    expect(fieldOf(() => reflectionReport({ re: 50, im: 0 }, { re: 0, im: 50 }))).toBe('referenceOhm');
    expect(fieldOf(() => reflectionReportFromGamma({ re: 0, im: 0 }, { re: -50, im: 0 }))).toBe('referenceOhm');
  });

  it("rejects |Γ| above 1 on a real reference on 'reflection'", () => {
    expect(fieldOf(() => reflectionReportFromGamma({ re: 0.9, im: 0.5 }, Z50))).toBe('reflection');
  });

  it("rejects a Γ that means a negative resistance on a complex reference on 'reflection'", () => {
    expect(fieldOf(() => reflectionReportFromGamma({ re: -3, im: 0 }, { re: 50, im: -50 }))).toBe('reflection');
  });

  it("rejects ZL + Z0 = 0 instead of dividing by zero on 'loadOhm'", () => {
    expect(fieldOf(() => reflectionCoefficient({ re: -50, im: 0 }, Z50))).toBe('loadOhm');
  });

  it("rejects non-finite parts on 'loadOhm'", () => {
    expect(fieldOf(() => reflectionReport({ re: Number.POSITIVE_INFINITY, im: 0 }, Z50))).toBe('loadOhm');
  });
});
