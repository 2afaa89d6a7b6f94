import FFT from 'fft.js';
import type { Complex } from '../rf/complex.ts';
import { SPEED_OF_LIGHT_M_PER_S } from '../rf/constants.ts';
import { RfInputError } from '../rf/errors.ts';
import { goldenMax } from '../rf/golden-section.ts';
import { reflectionAgainst } from './points.ts';

// Frequency-domain reflectometry in band-pass mode: the reflection measured over a band of evenly
// spaced frequencies, windowed and zero-padded, is turned into a response against round-trip time
// by an inverse discrete Fourier transform; distance = time · c · VF / 2. Method: e.g. Agilent
// application note 1287-12, "Time Domain Analysis Using a Network Analyzer" (band-pass mode,
// resolution c·VF/(2·span), range c·VF/(2·step)); from memory.

/** Windows applied to the reflection before the transform. */
export const FAULT_WINDOWS = ['rectangular', 'hann', 'blackman'] as const;
export type FaultWindow = (typeof FAULT_WINDOWS)[number];

/**
 * Highest sidelobe of each window in dB below its main lobe (F. J. Harris, "On the use of windows
 * for harmonic analysis with the discrete Fourier transform", Proc. IEEE 66(1), 1978, table 1;
 * from memory). A peak within PEAK_FLOOR_MARGIN_DB of this level below the strongest one may be a
 * sidelobe of it, so it is not listed.
 */
export const WINDOW_SIDELOBE_DB: Record<FaultWindow, number> = { rectangular: 13.3, hann: 31.5, blackman: 58.1 };

/** How far above the window's sidelobe level (relative to the strongest peak) the peak floor sits, dB. */
export const PEAK_FLOOR_MARGIN_DB = 3;

/** Fewest points a sweep needs for a distance-to-fault response worth reading. */
export const MIN_FAULT_POINTS = 16;

/** How far a frequency may sit from the even grid, as a fraction of the step (1 % keeps the phase error under 3.6° at the end of the range). */
export const FREQUENCY_GRID_TOLERANCE = 0.01;

/** The padded transform is at least this many times longer than the span, so its bins are 1/8 of the resolution or finer. */
const ZERO_PADDING = 8;

/** Most points an answer carries; finer grids are thinned evenly (peaks are always refined on the full response). */
export const MAX_FAULT_POINTS = 4096;

/** Most peaks an answer lists, strongest first. */
export const MAX_FAULT_PEAKS = 20;

/**
 * Symmetric window weights of length n (the forms numpy's `hanning` and `blackman` compute):
 * Hann 0.5 − 0.5·cos(2πk/(n−1)); Blackman 0.42 − 0.5·cos(2πk/(n−1)) + 0.08·cos(4πk/(n−1)).
 * @example windowWeights('hann', 5) // [0, 0.5, 1, 0.5, 0]
 */
export function windowWeights(window: FaultWindow, n: number): Float64Array {
  const w = new Float64Array(n);
  if (window === 'rectangular' || n === 1) return w.fill(1);
  const a = (2 * Math.PI) / (n - 1);
  for (let k = 0; k < n; k++) {
    w[k] = window === 'hann' ? 0.5 - 0.5 * Math.cos(a * k) : 0.42 - 0.5 * Math.cos(a * k) + 0.08 * Math.cos(2 * a * k);
  }
  return w;
}

/**
 * Σ_k x_k·e^{+j2πkm/size} for m = 0 … size−1 (x zero-padded to `size`, a power of two), as
 * interleaved re, im. This is numpy's `ifft(x, size) · size`.
 * @example inverseDftPadded(new Float64Array([1, 0]), 4) // [1, 0, 1, 0, 1, 0, 1, 0]
 */
export function inverseDftPadded(interleaved: Float64Array, size: number): Float64Array {
  const input = new Float64Array(2 * size);
  input.set(interleaved.subarray(0, Math.min(interleaved.length, 2 * size)));
  const out = new Float64Array(2 * size);
  new FFT(size).inverseTransform(out, input);
  // fft.js divides its inverse by the size; the sum itself is wanted here.
  for (let i = 0; i < out.length; i++) out[i] = (out[i] as number) * size;
  return out;
}

/** A reflection at one distance along the line. */
export interface FaultPoint {
  distanceM: number;
  /** |Γ| of what reflects there (with the line's loss out and back removed when compensated). */
  reflectionMagnitude: number;
  /** −20·log10 of it; null where it is 0. */
  returnLossDb: number | null;
}

/** The distance-to-fault response of a sweep. */
export interface FaultDistanceResult {
  /** c·VF/(2·span): two reflections closer than this merge into one peak. */
  resolutionM: number;
  /** c·VF/(2·step): the unambiguous range; a reflection further away folds back to distance − this. */
  maxDistanceM: number;
  /** How far the points reach: the asked distance, else maxDistanceM. */
  rangeM: number;
  pointSpacingM: number;
  window: FaultWindow;
  velocityFactor: number;
  /** The one-way matched loss removed out and back, dB per 100 m; null when none was. */
  compensatedLossDbPer100m: number | null;
  /** Peaks whose return loss is above this are not listed (3 dB short of the window's sidelobe level under the strongest). */
  peakFloorReturnLossDb: number | null;
  points: FaultPoint[];
  /** Local maxima above the floor, strongest first, each refined on the continuous response. */
  peaks: FaultPoint[];
}

export interface FaultDistanceOptions {
  velocityFactor: number;
  window: FaultWindow;
  /** One-way matched loss of the line at the band's centre, dB/100 m; removed out and back when `compensateLoss`. */
  lossDbPer100m?: number;
  compensateLoss: boolean;
  /** Farthest distance wanted; default the unambiguous range. */
  maxDistanceM?: number;
}

/** A measured reflection at one frequency. */
export interface ReflectionSample {
  frequencyHz: number;
  reflection: Complex;
}

/**
 * A measured point as it was given: an impedance (ohms as a number when resistive; null for an open
 * circuit), or the reflection Γ itself against the sweep's reference.
 */
export interface MeasuredPoint {
  frequencyHz: number;
  loadOhm?: Complex | number | null | undefined;
  reflection?: Complex | undefined;
}

/**
 * The reflections of sweep points against a real reference R: Γ as given, else Γ = (Z − R)/(Z + R),
 * an open circuit (`loadOhm: null`) Γ = 1. Serves the JSON points of a request and a stored sweep's
 * points alike.
 * @example reflectionSamples([{ frequencyHz: 1e6, loadOhm: { re: 75, im: 0 } }], 50)[0].reflection // { re: 0.2, im: 0 }
 */
export function reflectionSamples(points: readonly MeasuredPoint[], referenceOhm: number): ReflectionSample[] {
  return points.map((p, k) => {
    if (p.reflection !== undefined) return { frequencyHz: p.frequencyHz, reflection: p.reflection };
    if (p.loadOhm === null || p.loadOhm === undefined) return { frequencyHz: p.frequencyHz, reflection: { re: 1, im: 0 } };
    const reflection = reflectionAgainst(typeof p.loadOhm === 'number' ? { re: p.loadOhm, im: 0 } : p.loadOhm, referenceOhm);
    if (!reflection) throw new RfInputError(`points.${k}.loadOhm`, `This load has no reflection coefficient against ${referenceOhm} Ω; a passive load has a resistance of 0 Ω or more.`);
    return { frequencyHz: p.frequencyHz, reflection };
  });
}

function returnLoss(mag: number): number | null {
  return mag === 0 ? null : -20 * Math.log10(mag);
}

/**
 * Checks that the frequencies are evenly spaced (within FREQUENCY_GRID_TOLERANCE of a step) and
 * gives the step; the error says by how much the worst point is off.
 */
export function evenFrequencyStep(samples: readonly ReflectionSample[], field = 'points'): number {
  const n = samples.length;
  if (n < MIN_FAULT_POINTS) {
    throw new RfInputError(field, `Distance to fault needs at least ${MIN_FAULT_POINTS} evenly spaced frequencies; this sweep has ${n}. Sweep a few hundred points across a wide span.`);
  }
  const f0 = (samples[0] as ReflectionSample).frequencyHz;
  const span = (samples[n - 1] as ReflectionSample).frequencyHz - f0;
  const step = span / (n - 1);
  if (!(step > 0) || !Number.isFinite(step)) throw new RfInputError(field, 'The frequencies must increase from the first point to the last.');
  let worst = 0;
  let worstAt = 0;
  for (let k = 0; k < n; k++) {
    const f = (samples[k] as ReflectionSample).frequencyHz;
    if (!Number.isFinite(f)) throw new RfInputError(`${field}.${k}.frequencyHz`, 'Each frequency must be a finite number.');
    const off = Math.abs(f - (f0 + k * step)) / step;
    if (off > worst) {
      worst = off;
      worstAt = k;
    }
  }
  if (worst > FREQUENCY_GRID_TOLERANCE) {
    const f = (samples[worstAt] as ReflectionSample).frequencyHz;
    throw new RfInputError(
      `${field}.${worstAt}.frequencyHz`,
      `Distance to fault needs evenly spaced frequencies: with ${n} points from ${f0} Hz to ${f0 + span} Hz the step is ${step} Hz, but ${f} Hz is ${(worst * 100).toPrecision(3)} % of a step away from ${f0 + worstAt * step} Hz (at most ${FREQUENCY_GRID_TOLERANCE * 100} % is accepted). Sweep with a fixed step, or resample the sweep.`,
    );
  }
  return step;
}

/**
 * Distance to fault by band-pass frequency-domain reflectometry: h(τ) = Σ w_k·Γ_k·e^{+j2π·k·Δf·τ} / Σ w_k,
 * so a single reflection ρ·e^{−j2πfτ₀} reads ρ at τ = τ₀; distance d = τ·c·VF/2. The padded
 * transform (fft.js) gives the response on a grid of at most resolution/8; peaks are local maxima
 * above a floor 3 dB short of the window's sidelobe level under the strongest, refined by a golden-section search on the
 * response summed directly. With `compensateLoss` the magnitude at d is raised by the line's matched
 * loss out and back, 2·d·loss (the loss at the band's centre).
 * @example faultDistance(samples, { velocityFactor: 0.66, window: 'hann', compensateLoss: false }).peaks[0].distanceM
 */
export function faultDistance(samples: readonly ReflectionSample[], options: FaultDistanceOptions): FaultDistanceResult {
  const n = samples.length;
  const step = evenFrequencyStep(samples);
  const vf = options.velocityFactor;
  if (!(vf > 0 && vf <= 1)) throw new RfInputError('line.velocityFactor', 'The velocity factor must be greater than 0 and at most 1 (for example 0.66 for solid polyethylene coax).');
  const span = step * (n - 1);
  const speed = SPEED_OF_LIGHT_M_PER_S * vf;
  const resolutionM = speed / (2 * span);
  const unambiguousM = speed / (2 * step);
  let rangeM = unambiguousM;
  if (options.maxDistanceM !== undefined) {
    const asked = options.maxDistanceM;
    if (!(asked > 0) || !Number.isFinite(asked)) throw new RfInputError('maxDistanceM', 'maxDistanceM must be a distance greater than 0 m.');
    if (asked > unambiguousM * (1 + 1e-12)) {
      throw new RfInputError(
        'maxDistanceM',
        `With a step of ${step} Hz the sweep sees at most ${unambiguousM} m (c·VF/(2·step)); a fault further away would fold back into that range. Ask for ${unambiguousM} m or less, or sweep more points over the span (a smaller step).`,
      );
    }
    if (resolutionM >= asked) {
      throw new RfInputError(
        'maxDistanceM',
        `A span of ${span} Hz resolves ${resolutionM} m (c·VF/(2·span)), coarser than the ${asked} m asked; sweep a wider span or ask for a longer distance.`,
      );
    }
    rangeM = Math.min(asked, unambiguousM);
  }
  const lossDbPerM = options.compensateLoss && options.lossDbPer100m !== undefined ? options.lossDbPer100m / 100 : 0;
  if (!(lossDbPerM >= 0) || !Number.isFinite(lossDbPerM)) throw new RfInputError('line.lossDbPer100m', 'The line loss must be 0 dB/100 m or more.');

  const w = windowWeights(options.window, n);
  const weighted = new Float64Array(2 * n);
  let wSum = 0;
  for (let k = 0; k < n; k++) {
    const g = (samples[k] as ReflectionSample).reflection;
    if (!(Number.isFinite(g.re) && Number.isFinite(g.im))) throw new RfInputError(`points.${k}`, 'Each reflection must be finite.');
    const wk = w[k] as number;
    weighted[2 * k] = wk * g.re;
    weighted[2 * k + 1] = wk * g.im;
    wSum += wk;
  }

  let size = 1;
  while (size < ZERO_PADDING * (n - 1) || size < n) size *= 2;
  const spectrum = inverseDftPadded(weighted, size);
  const binM = unambiguousM / size;
  // Compensation in field terms: 2·d·loss dB out and back, as a voltage ratio.
  const gainPerM = (lossDbPerM * 2) / 20;
  const magnitudeAtBin = (m: number): number => {
    const i = ((m % size) + size) % size;
    const mag = Math.hypot(spectrum[2 * i] as number, spectrum[2 * i + 1] as number) / wSum;
    return gainPerM === 0 ? mag : mag * 10 ** (gainPerM * Math.max(0, m * binM));
  };
  // The continuous response, summed directly: exact between the bins.
  const phasePerM = (2 * Math.PI * step * 2) / speed;
  const magnitudeAt = (d: number): number => {
    let re = 0;
    let im = 0;
    // e^{j·a·k} by rotation, restarted from cos/sin every 64 terms so rounding cannot build up.
    const a = phasePerM * d;
    const ca = Math.cos(a);
    const sa = Math.sin(a);
    let c = 1;
    let s = 0;
    for (let k = 0; k < n; k++) {
      if ((k & 63) === 0) {
        c = Math.cos(a * k);
        s = Math.sin(a * k);
      }
      const xr = weighted[2 * k] as number;
      const xi = weighted[2 * k + 1] as number;
      re += xr * c - xi * s;
      im += xr * s + xi * c;
      const next = c * ca - s * sa;
      s = s * ca + c * sa;
      c = next;
    }
    const mag = Math.hypot(re, im) / wSum;
    return gainPerM === 0 ? mag : mag * 10 ** (gainPerM * Math.max(0, d));
  };

  const lastBin = Math.min(size - 1, Math.floor(rangeM / binM + 1e-9));
  const stride = Math.ceil((lastBin + 1) / MAX_FAULT_POINTS);
  const points: FaultPoint[] = [];
  for (let m = 0; m <= lastBin; m += stride) {
    const mag = magnitudeAtBin(m);
    points.push({ distanceM: m * binM, reflectionMagnitude: mag, returnLossDb: returnLoss(mag) });
  }

  const candidates: number[] = [];
  let strongest = 0;
  for (let m = 0; m <= lastBin; m++) {
    const y = magnitudeAtBin(m);
    // Neighbours wrap around: the response is periodic in the unambiguous range.
    if (y > 0 && y >= magnitudeAtBin(m - 1) && y > magnitudeAtBin(m + 1)) {
      candidates.push(m);
      if (y > strongest) strongest = y;
    }
  }
  // 3 dB above the sidelobe level, so that no sidelobe of the strongest peak is listed (loss
  // compensation raises the far sidelobe a little more than the peak).
  const floor = strongest * 10 ** (-(WINDOW_SIDELOBE_DB[options.window] - PEAK_FLOOR_MARGIN_DB) / 20);
  const peaks: FaultPoint[] = [];
  const ranked = candidates.filter((m) => magnitudeAtBin(m) >= floor).sort((a, b) => magnitudeAtBin(b) - magnitudeAtBin(a)).slice(0, MAX_FAULT_PEAKS);
  for (const m of ranked) {
    const best = goldenMax(magnitudeAt, (m - 1) * binM, (m + 1) * binM, binM * 1e-6);
    const d = Math.min(rangeM, Math.max(0, best.at));
    const mag = d === best.at ? best.value : magnitudeAt(d);
    peaks.push({ distanceM: d, reflectionMagnitude: mag, returnLossDb: returnLoss(mag) });
  }
  peaks.sort((a, b) => b.reflectionMagnitude - a.reflectionMagnitude);

  return {
    resolutionM,
    maxDistanceM: unambiguousM,
    rangeM,
    pointSpacingM: stride * binM,
    window: options.window,
    velocityFactor: vf,
    compensatedLossDbPer100m: lossDbPerM > 0 ? lossDbPerM * 100 : null,
    peakFloorReturnLossDb: strongest > 0 ? returnLoss(floor) : null,
    points,
    peaks,
  };
}
