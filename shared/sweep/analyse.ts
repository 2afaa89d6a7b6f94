import type { Complex } from '../rf/complex.ts';
import { RfInputError } from '../rf/errors.ts';
import type { ReflectionDetail } from '../rf/reflection.ts';
import type { SweepPointInput } from './points.ts';

/**
 * SWR threshold for the "usable band" when none is given: 2:1 is common practice for what a
 * transmitter tolerates without a tuner.
 * @example analyseSweep(points, { referenceOhm: 50 }).summary.thresholdSwr // 2
 */
export const DEFAULT_THRESHOLD_SWR = 2;

/** An acceptance mask over a frequency range; the range defaults to the whole sweep. */
export type SweepMask =
  | { maxSwr: number; startHz?: number; stopHz?: number }
  | { minReturnLossDb: number; startHz?: number; stopHz?: number };

/** A mask with its range filled in, echoed in the verdict. */
export type ResolvedSweepMask =
  | { maxSwr: number; startHz: number; stopHz: number }
  | { minReturnLossDb: number; startHz: number; stopHz: number };

/** One point with its figures against the analysis reference. */
export interface AnalysedPoint {
  frequencyHz: number;
  /** Null for an ideal open circuit. */
  loadOhm: Complex | null;
  reflection: ReflectionDetail;
  /** (1 + |Γ|)/(1 − |Γ|); null when unbounded (|Γ| ≥ 1). */
  swr: number | null;
  /** −20·log10|Γ|; null for a perfect match (|Γ| = 0). Negative only for a measured |Γ| above 1. */
  returnLossDb: number | null;
}

/** A frequency range in which SWR stays under the threshold. */
export interface SweepBand {
  startHz: number;
  stopHz: number;
}

/** What the whole sweep shows: best match, usable bands and resonances. */
export interface SweepSummary {
  /** Lowest SWR of any measured point; null when every point is a total reflection. */
  minSwr: number | null;
  /** Frequency of the first point with minSwr; null with minSwr. */
  minSwrFrequencyHz: number | null;
  thresholdSwr: number;
  bands: SweepBand[];
  /** Frequencies where the load reactance changes sign (series or parallel resonance). */
  resonancesHz: number[];
  pointCount: number;
  startHz: number;
  stopHz: number;
}

/** Outcome of an acceptance mask. */
export interface SweepVerdict {
  pass: boolean;
  /** The point in the mask range with the largest |Γ| (highest SWR, lowest return loss); first one on a tie. */
  worst: { frequencyHz: number; swr: number | null; returnLossDb: number | null };
  mask: ResolvedSweepMask;
}

/** Result of analyseSweep. */
export interface SweepAnalysis {
  points: AnalysedPoint[];
  summary: SweepSummary;
  /** Present when a mask was given. */
  verdict?: SweepVerdict;
}

/** Options of analyseSweep. */
export interface AnalyseOptions {
  /** Real reference resistance in ohms the SWR is read against (the transmitter's 50 ohm, usually). */
  referenceOhm: number;
  /** Bands are where SWR < thresholdSwr; defaults to DEFAULT_THRESHOLD_SWR. */
  thresholdSwr?: number;
  mask?: SweepMask;
}

function requireFiniteField(value: unknown, field: string, what: string): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) throw new RfInputError(field, `${what} must be a finite number.`);
  return value;
}

/** Loads above this many ohms are scaled before Γ is computed (see analyseSweep). */
const HUGE_OHM = 1e150;

/**
 * Analyses a one-port sweep against a real reference R: per point Γ = (Z − R)/(Z + R),
 * SWR = (1 + |Γ|)/(1 − |Γ|) and return loss −20·log10|Γ|; the minimum SWR; the bands where SWR is
 * under the threshold, each edge linearly interpolated in SWR between the two points around it (a
 * band touching an end of the sweep stops at that end; next to an unbounded-SWR point the edge is
 * the in-band point); resonances where the reactance changes sign, linearly interpolated (across a
 * run of exactly-zero reactances, the middle of the run; never across an open-circuit point);
 * and, with a mask, pass/fail with the worst measured point inside the mask range.
 * Points must have strictly increasing frequencies. An open circuit (`loadOhm: null`) is Γ = 1.
 * A measured |Γ| above 1 (calibration noise on a near-open or near-short) is kept as measured:
 * SWR null and a negative return loss, never a clamped figure.
 * Bad options are RfInputError with the field path (`referenceOhm`, `thresholdSwr`, `mask.startHz`…);
 * a mask range reaching outside the sweep is one too, since acceptance cannot be shown where
 * nothing was measured.
 * @example analyseSweep([{ frequencyHz: 7.1e6, loadOhm: { re: 75, im: 0 } }], { referenceOhm: 50 }).points[0].swr // 1.5
 */
export function analyseSweep(points: readonly SweepPointInput[], options: AnalyseOptions): SweepAnalysis {
  if (!Array.isArray(points) || points.length === 0) {
    throw new RfInputError('points', 'The sweep has no points; give at least one frequency with its load.');
  }
  const r = requireFiniteField(options.referenceOhm, 'referenceOhm', 'referenceOhm');
  if (r <= 0) throw new RfInputError('referenceOhm', 'referenceOhm must be greater than 0 ohm (for example 50).');
  const threshold = options.thresholdSwr === undefined ? DEFAULT_THRESHOLD_SWR : requireFiniteField(options.thresholdSwr, 'thresholdSwr', 'thresholdSwr');
  if (threshold <= 1) throw new RfInputError('thresholdSwr', 'thresholdSwr must be above 1 (SWR is never below 1); 2 is common practice.');

  const n = points.length;
  // Flat typed arrays for the band, resonance and mask passes: no per-point garbage beyond the output.
  const freq = new Float64Array(n);
  const swrs = new Float64Array(n); // Infinity where SWR is unbounded
  const mags = new Float64Array(n);
  const reactance = new Float64Array(n); // NaN at an open circuit
  const out: AnalysedPoint[] = new Array<AnalysedPoint>(n);
  let previousHz = -Infinity;
  let minSwr = Infinity;
  let minAt = -1;

  for (let i = 0; i < n; i++) {
    const p = points[i] as SweepPointInput;
    const f = p.frequencyHz;
    if (typeof f !== 'number' || !Number.isFinite(f) || f < 0) {
      throw new RfInputError(`points.${i}.frequencyHz`, 'Each frequency must be a finite number of 0 Hz or more.');
    }
    if (f <= previousHz) {
      throw new RfInputError(`points.${i}.frequencyHz`, `Frequencies must strictly increase; ${f} Hz does not come after ${previousHz} Hz. Sort the points and drop duplicates.`);
    }
    previousHz = f;
    const z = p.loadOhm;
    let gr: number;
    let gi: number;
    let m: number;
    if (z === null) {
      gr = 1;
      gi = 0;
      m = 1;
      reactance[i] = NaN;
    } else {
      let zr = z.re;
      let zi = z.im;
      if (typeof zr !== 'number' || typeof zi !== 'number' || !Number.isFinite(zr) || !Number.isFinite(zi)) {
        throw new RfInputError(`points.${i}.loadOhm`, 'loadOhm must be { re, im } with finite parts, or null for an open circuit.');
      }
      // Γ does not change when Z and R are scaled together; a load near the largest double is scaled
      // down first, or Z + R and the division below overflow to Infinity/Infinity = NaN.
      let rs = r;
      const size = Math.max(Math.abs(zr), Math.abs(zi));
      if (size > HUGE_OHM) {
        zr /= size;
        zi /= size;
        rs = r / size;
      }
      // Γ = (Z − R)/(Z + R) by Smith's division, inlined to keep the loop allocation-free.
      const nr = zr - rs;
      const dr = zr + rs;
      if (dr === 0 && zi === 0) {
        throw new RfInputError(`points.${i}.loadOhm`, `The load equals −${r} ohm, for which no reflection coefficient exists; check the sign of the resistance.`);
      }
      if (Math.abs(dr) >= Math.abs(zi)) {
        const t = zi / dr;
        const d = dr + zi * t;
        gr = (nr + zi * t) / d;
        gi = (zi - nr * t) / d;
      } else {
        const t = dr / zi;
        const d = dr * t + zi;
        gr = (nr * t + zi) / d;
        gi = (zi * t - nr) / d;
      }
      // A pure reactance reflects totally; rounding must not turn that into a huge finite SWR.
      m = zr === 0 ? 1 : Math.sqrt(gr * gr + gi * gi);
      if (!Number.isFinite(m)) {
        // Not reachable with the scaling above; a stored NaN would break every later export of the sweep.
        throw new RfInputError(`points.${i}.loadOhm`, 'The reflection coefficient of this load cannot be computed in double precision.');
      }
      reactance[i] = z.im; // unscaled: resonances interpolate between neighbouring points
    }
    const swr = m < 1 ? (1 + m) / (1 - m) : null;
    freq[i] = f;
    mags[i] = m;
    swrs[i] = swr === null ? Infinity : swr;
    if (swr !== null && swr < minSwr) {
      minSwr = swr;
      minAt = i;
    }
    out[i] = {
      frequencyHz: f,
      loadOhm: z,
      reflection: { re: gr, im: gi, magnitude: m, angleDeg: (Math.atan2(gi, gr) * 180) / Math.PI },
      swr,
      returnLossDb: m === 0 ? null : m === 1 ? 0 : -20 * Math.log10(m),
    };
  }

  const summary: SweepSummary = {
    minSwr: minAt === -1 ? null : minSwr,
    minSwrFrequencyHz: minAt === -1 ? null : (freq[minAt] as number),
    thresholdSwr: threshold,
    bands: bandsUnder(freq, swrs, threshold),
    resonancesHz: reactanceSignChanges(freq, reactance),
    pointCount: n,
    startHz: freq[0] as number,
    stopHz: freq[n - 1] as number,
  };
  const analysis: SweepAnalysis = { points: out, summary };
  if (options.mask !== undefined) analysis.verdict = verdictFor(options.mask, freq, mags, out);
  return analysis;
}

/** Frequency where SWR crosses the threshold between points a and b, linear in SWR. */
function edge(freq: Float64Array, swrs: Float64Array, a: number, b: number, threshold: number): number {
  const sa = swrs[a] as number;
  const sb = swrs[b] as number;
  const fa = freq[a] as number;
  const fb = freq[b] as number;
  // Linear interpolation towards an unbounded SWR tends to the finite point, so the edge is there.
  if (sa === Infinity) return fb;
  if (sb === Infinity) return fa;
  return fa + ((threshold - sa) / (sb - sa)) * (fb - fa);
}

function bandsUnder(freq: Float64Array, swrs: Float64Array, threshold: number): SweepBand[] {
  const bands: SweepBand[] = [];
  const n = freq.length;
  let inBand = false;
  let startHz = 0;
  for (let i = 0; i < n; i++) {
    const below = (swrs[i] as number) < threshold;
    if (below && !inBand) {
      startHz = i === 0 ? (freq[0] as number) : edge(freq, swrs, i - 1, i, threshold);
      inBand = true;
    } else if (!below && inBand) {
      bands.push({ startHz, stopHz: edge(freq, swrs, i - 1, i, threshold) });
      inBand = false;
    }
  }
  if (inBand) bands.push({ startHz, stopHz: freq[n - 1] as number });
  return bands;
}

function reactanceSignChanges(freq: Float64Array, x: Float64Array): number[] {
  const found: number[] = [];
  let prev = -1; // last point with a finite, non-zero reactance
  let zeroStart = -1; // first point of the current run of exactly-zero reactances
  for (let i = 0; i < x.length; i++) {
    const xi = x[i] as number;
    if (Number.isNaN(xi)) {
      // An open circuit has no reactance to compare across.
      prev = -1;
      zeroStart = -1;
      continue;
    }
    if (xi === 0) {
      if (zeroStart === -1) zeroStart = i;
      continue;
    }
    if (prev !== -1) {
      const xp = x[prev] as number;
      if (xp < 0 !== xi < 0) {
        const fp = freq[prev] as number;
        const fi = freq[i] as number;
        found.push(zeroStart === -1 ? fp + (-xp / (xi - xp)) * (fi - fp) : ((freq[zeroStart] as number) + (freq[i - 1] as number)) / 2);
      }
    }
    prev = i;
    zeroStart = -1;
  }
  return found;
}

function verdictFor(mask: SweepMask, freq: Float64Array, mags: Float64Array, out: AnalysedPoint[]): SweepVerdict {
  if (typeof mask !== 'object' || mask === null) throw new RfInputError('mask', 'mask must be { maxSwr } or { minReturnLossDb }, optionally with startHz and stopHz.');
  const hasSwr = 'maxSwr' in mask && mask.maxSwr !== undefined;
  const hasRl = 'minReturnLossDb' in mask && mask.minReturnLossDb !== undefined;
  if (hasSwr === hasRl) {
    throw new RfInputError('mask', hasSwr ? 'Give either maxSwr or minReturnLossDb in the mask, not both.' : 'The mask needs maxSwr or minReturnLossDb.');
  }
  const n = freq.length;
  const sweepStart = freq[0] as number;
  const sweepStop = freq[n - 1] as number;
  const startHz = mask.startHz === undefined ? sweepStart : requireFiniteField(mask.startHz, 'mask.startHz', 'mask.startHz');
  const stopHz = mask.stopHz === undefined ? sweepStop : requireFiniteField(mask.stopHz, 'mask.stopHz', 'mask.stopHz');
  if (stopHz < startHz) throw new RfInputError('mask.stopHz', 'mask.stopHz is below mask.startHz; give the range from low to high.');
  if (startHz < sweepStart) {
    throw new RfInputError('mask.startHz', `The mask starts at ${startHz} Hz, below the sweep's first point at ${sweepStart} Hz; acceptance cannot be shown where nothing was measured. Raise startHz or sweep wider.`);
  }
  if (stopHz > sweepStop) {
    throw new RfInputError('mask.stopHz', `The mask stops at ${stopHz} Hz, above the sweep's last point at ${sweepStop} Hz; acceptance cannot be shown where nothing was measured. Lower stopHz or sweep wider.`);
  }
  let worst = -1;
  for (let i = 0; i < n; i++) {
    const f = freq[i] as number;
    if (f < startHz) continue;
    if (f > stopHz) break;
    if (worst === -1 || (mags[i] as number) > (mags[worst] as number)) worst = i;
  }
  if (worst === -1) {
    throw new RfInputError('mask.startHz', `No measured point lies between ${startHz} Hz and ${stopHz} Hz; widen the mask range or sweep with finer steps.`);
  }
  const w = out[worst] as AnalysedPoint;
  let resolved: ResolvedSweepMask;
  let pass: boolean;
  if (hasSwr) {
    const maxSwr = requireFiniteField((mask as { maxSwr: number }).maxSwr, 'mask.maxSwr', 'mask.maxSwr');
    if (maxSwr < 1) throw new RfInputError('mask.maxSwr', 'mask.maxSwr must be 1 or more (SWR is never below 1).');
    resolved = { maxSwr, startHz, stopHz };
    pass = w.swr !== null && w.swr <= maxSwr;
  } else {
    const minReturnLossDb = requireFiniteField((mask as { minReturnLossDb: number }).minReturnLossDb, 'mask.minReturnLossDb', 'mask.minReturnLossDb');
    if (minReturnLossDb < 0) throw new RfInputError('mask.minReturnLossDb', 'mask.minReturnLossDb must be 0 dB or more; give return loss as a positive number.');
    resolved = { minReturnLossDb, startHz, stopHz };
    pass = w.returnLossDb === null || w.returnLossDb >= minReturnLossDb;
  }
  return { pass, worst: { frequencyHz: w.frequencyHz, swr: w.swr, returnLossDb: w.returnLossDb }, mask: resolved };
}
