import { abs, add, argDeg, conj, div, inv, isFiniteComplex, sub, type Complex } from './complex.ts';
import { RfInputError } from './errors.ts';
import { mismatchFromReflectionMagnitude, type MismatchFigures } from './mismatch.ts';
import { requireComplex, requirePassiveLoad, requireReferenceImpedance } from './validate.ts';

/** A reflection coefficient in rectangular and polar form. */
export interface ReflectionDetail {
  re: number;
  im: number;
  magnitude: number;
  /** Angle in degrees, (−180, 180]. */
  angleDeg: number;
}

/**
 * Voltage reflection coefficient Γ = (ZL − Z0)/(ZL + Z0).
 * @example reflectionCoefficient({ re: 100, im: 50 }, { re: 50, im: 0 }) // { re: 0.4, im: 0.2 }
 */
export function reflectionCoefficient(loadOhm: Complex, referenceOhm: Complex): Complex {
  const zl = requireComplex(loadOhm, 'loadOhm');
  const z0 = requireComplex(referenceOhm, 'referenceOhm');
  const den = add(zl, z0);
  if (den.re === 0 && den.im === 0) {
    throw new RfInputError('loadOhm', 'The load is the negative of the reference impedance (ZL + Z0 = 0), so no reflection coefficient exists; check the load and reference values.');
  }
  return div(sub(zl, z0), den);
}

/**
 * Power-wave reflection coefficient s = (ZL − Z0*)/(ZL + Z0) (Kurokawa, "Power Waves and the
 * Scattering Matrix", IEEE Trans. MTT, 1965). Equals Γ for a real Z0; |s| ≤ 1 for every passive
 * load even when Z0 is complex, which is why mismatch figures are taken from it.
 * @example powerWaveReflection({ re: 50, im: 10 }, { re: 50, im: -10 }) // { re: 0, im: 0 } (conjugate match)
 */
export function powerWaveReflection(loadOhm: Complex, referenceOhm: Complex): Complex {
  const zl = requireComplex(loadOhm, 'loadOhm');
  const z0 = requireComplex(referenceOhm, 'referenceOhm');
  const den = add(zl, z0);
  if (den.re === 0 && den.im === 0) {
    throw new RfInputError('loadOhm', 'The load is the negative of the reference impedance (ZL + Z0 = 0), so no reflection coefficient exists; check the load and reference values.');
  }
  return div(sub(zl, conj(z0)), den);
}

/**
 * Load impedance from a reflection coefficient, Z = Z0·(1 + Γ)/(1 − Γ); null at Γ = 1 (open circuit).
 * @example impedanceFromReflection({ re: 0.2, im: 0 }, { re: 50, im: 0 }) // { re: 75, im: 0 }
 */
export function impedanceFromReflection(reflection: Complex, referenceOhm: Complex): Complex | null {
  const g = requireComplex(reflection, 'reflection');
  const z0 = requireComplex(referenceOhm, 'referenceOhm');
  const den = { re: 1 - g.re, im: -g.im };
  if (den.re === 0 && den.im === 0) return null;
  const num = { re: 1 + g.re, im: g.im };
  const ratio = div(num, den);
  const z = { re: z0.re * ratio.re - z0.im * ratio.im, im: z0.re * ratio.im + z0.im * ratio.re };
  // Γ a rounding step away from 1 is an open circuit for every practical purpose.
  return isFiniteComplex(z) ? z : null;
}

/**
 * Rectangular and polar form of a complex reflection coefficient.
 * @example reflectionDetail({ re: 0, im: 0.5 }) // { re: 0, im: 0.5, magnitude: 0.5, angleDeg: 90 }
 */
export function reflectionDetail(gamma: Complex): ReflectionDetail {
  return { re: gamma.re, im: gamma.im, magnitude: abs(gamma), angleDeg: argDeg(gamma) };
}

/** Everything about one load seen against one reference impedance. */
export interface ReflectionReport extends Omit<MismatchFigures, 'reflectionMagnitude'> {
  /** Voltage-wave Γ = (ZL − Z0)/(ZL + Z0). */
  reflection: ReflectionDetail;
  /** Power-wave s = (ZL − Z0*)/(ZL + Z0); the mismatch figures come from |s|. */
  powerWaveReflection: ReflectionDetail;
  /** Null for an open circuit. */
  loadOhm: Complex | null;
  /** 1/ZL; null for a short circuit. */
  admittanceS: Complex | null;
  referenceOhm: Complex;
}

function figuresFromPowerWave(magnitude: number): Omit<MismatchFigures, 'reflectionMagnitude'> {
  // |s| ≤ 1 holds exactly for passive loads; a rounding step above 1 must not read as an active load.
  const { reflectionMagnitude: _unused, ...rest } = mismatchFromReflectionMagnitude(Math.min(1, magnitude));
  return rest;
}

/**
 * Reflection report of a load: Γ = (ZL − Z0)/(ZL + Z0), power-wave s = (ZL − Z0*)/(ZL + Z0), and
 * SWR, return loss, mismatch loss and power ratios from |s|.
 * @example reflectionReport({ re: 100, im: 50 }, { re: 50, im: 0 }).swr // 2.618…
 */
export function reflectionReport(loadOhm: Complex, referenceOhm: Complex): ReflectionReport {
  const zl = requirePassiveLoad(loadOhm, 'loadOhm');
  const z0 = requireReferenceImpedance(referenceOhm, 'referenceOhm');
  const gamma = reflectionCoefficient(zl, z0);
  const s = powerWaveReflection(zl, z0);
  const detailS = reflectionDetail(s);
  return {
    reflection: reflectionDetail(gamma),
    powerWaveReflection: detailS,
    ...figuresFromPowerWave(detailS.magnitude),
    loadOhm: zl,
    admittanceS: zl.re === 0 && zl.im === 0 ? null : inv(zl),
    referenceOhm: z0,
  };
}

/**
 * Reflection report from a measured Γ: ZL = Z0·(1 + Γ)/(1 − Γ), then as reflectionReport.
 * With a real Z0, |Γ| > 1 is rejected; with a complex Z0 the test is the load's resistance,
 * because there a passive load can have |Γ| slightly above 1.
 * @example reflectionReportFromGamma({ re: 0.2, im: 0 }, { re: 50, im: 0 }).loadOhm // { re: 75, im: 0 }
 */
export function reflectionReportFromGamma(reflection: Complex, referenceOhm: Complex): ReflectionReport {
  const gamma = requireComplex(reflection, 'reflection');
  const z0 = requireReferenceImpedance(referenceOhm, 'referenceOhm');
  const magnitude = abs(gamma);
  if (z0.im === 0 && magnitude > 1) {
    throw new RfInputError('reflection', 'A passive load has |Γ| of at most 1; check that the reflection coefficient is not a gain or in dB.');
  }
  let zl = impedanceFromReflection(gamma, z0);
  // On the unit circle a real Z0 gives a pure reactance; drop the rounding residue of the resistance.
  if (zl !== null && z0.im === 0 && magnitude === 1) zl = { re: 0, im: zl.im };
  if (zl !== null && z0.im !== 0 && zl.re < -1e-12 * abs(zl)) {
    throw new RfInputError('reflection', 'This reflection coefficient means a negative load resistance against the given reference impedance; check Γ and the reference.');
  }
  // Open circuit: s tends to 1 as ZL grows without bound.
  const s = zl === null ? { re: 1, im: 0 } : z0.im === 0 ? gamma : powerWaveReflection(zl, z0);
  const detailS = reflectionDetail(s);
  return {
    reflection: { re: gamma.re, im: gamma.im, magnitude, angleDeg: argDeg(gamma) },
    powerWaveReflection: detailS,
    ...figuresFromPowerWave(detailS.magnitude),
    loadOhm: zl,
    admittanceS: zl === null ? { re: 0, im: 0 } : zl.re === 0 && zl.im === 0 ? null : inv(zl),
    referenceOhm: z0,
  };
}
