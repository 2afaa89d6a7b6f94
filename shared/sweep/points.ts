import type { Complex } from '../rf/complex.ts';

/**
 * Most frequency points one sweep may hold. Analyzers export a few thousand at most; the cap keeps
 * one upload from holding a worker for seconds and bounds the memory of the stored analysis.
 * @example if (count > MAX_SWEEP_POINTS) throw new SweepFormatError(line, 'too many points');
 */
export const MAX_SWEEP_POINTS = 100_000;

/** One measured frequency point of a one-port sweep. */
export interface SweepPoint {
  frequencyHz: number;
  /**
   * Load impedance in ohms; null for an ideal open circuit (Γ = 1 exactly, or an admittance of 0),
   * which has no finite impedance. Consumers treat null as Γ = 1 against any real reference.
   */
  loadOhm: Complex | null;
  /** Voltage reflection coefficient Γ = (Z − R)/(Z + R) against the sweep's `referenceOhm`. */
  reflection: Complex;
}

/** A one-port sweep: points in strictly increasing frequency, reflections against `referenceOhm`. */
export interface Sweep {
  /** Real reference resistance R in ohms that `reflection` is taken against. */
  referenceOhm: number;
  points: SweepPoint[];
}

/** What analysis and moving need from a point: the reflection is re-derived from the impedance. */
export type SweepPointInput = Pick<SweepPoint, 'frequencyHz' | 'loadOhm'>;

/**
 * Γ = (Z − R)/(Z + R) for a real reference R, by Smith's division so that very large impedances
 * neither overflow nor lose the small imaginary part. Returns null when Z = −R (no Γ exists).
 * @example reflectionAgainst({ re: 75, im: 0 }, 50) // { re: 0.2, im: 0 }
 */
export function reflectionAgainst(loadOhm: Complex, referenceOhm: number): Complex | null {
  const nr = loadOhm.re - referenceOhm;
  const ni = loadOhm.im;
  const dr = loadOhm.re + referenceOhm;
  const di = loadOhm.im;
  if (dr === 0 && di === 0) return null;
  if (Math.abs(dr) >= Math.abs(di)) {
    const r = di / dr;
    const d = dr + di * r;
    return { re: (nr + ni * r) / d, im: (ni - nr * r) / d };
  }
  const r = dr / di;
  const d = dr * r + di;
  return { re: (nr * r + ni) / d, im: (ni * r - nr) / d };
}

/**
 * Z = R·(1 + Γ)/(1 − Γ) for a real reference R; null at Γ = 1 (ideal open circuit) or when the
 * result is not finite.
 * @example impedanceAgainst({ re: 0.2, im: 0 }, 50) // { re: 75, im: 0 }
 */
export function impedanceAgainst(reflection: Complex, referenceOhm: number): Complex | null {
  const dr = 1 - reflection.re;
  const di = -reflection.im;
  if (dr === 0 && di === 0) return null;
  const nr = 1 + reflection.re;
  const ni = reflection.im;
  let re: number;
  let im: number;
  if (Math.abs(dr) >= Math.abs(di)) {
    const r = di / dr;
    const d = dr + di * r;
    re = (nr + ni * r) / d;
    im = (ni - nr * r) / d;
  } else {
    const r = dr / di;
    const d = dr * r + di;
    re = (nr * r + ni) / d;
    im = (ni * r - nr) / d;
  }
  re *= referenceOhm;
  im *= referenceOhm;
  return Number.isFinite(re) && Number.isFinite(im) ? { re, im } : null;
}
