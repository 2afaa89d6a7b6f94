import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { SPEED_OF_LIGHT_M_PER_S } from '../../../shared/rf/constants.ts';
import { RfInputError } from '../../../shared/rf/errors.ts';
import {
  evenFrequencyStep,
  faultDistance,
  inverseDftPadded,
  MIN_FAULT_POINTS,
  windowWeights,
  type FaultWindow,
  type ReflectionSample,
} from '../../../shared/sweep/fault-distance.ts';
import { numpyBandPassMagnitudes, numpyInverseDft, numpyReflectionOfSections, numpyWindow, type NumpySection } from '../../helpers/numpy.ts';

// Method: band-pass frequency-domain reflectometry (e.g. Agilent application note 1287-12, "Time
// Domain Analysis Using a Network Analyzer": resolution c·VF/(2·span), range c·VF/(2·step); from
// memory). References: numpy's window functions and inverse FFT (python3-numpy), and sweeps
// synthesised by numpy from the telegrapher's equations (ABCD matrices of each section).

const VF = 0.66;
// Each numpy call starts a Python process; on a busy machine that alone can take seconds.
const NUMPY_TIMEOUT_MS = 60_000;

function frequencies(startHz: number, stepHz: number, n: number): number[] {
  return Array.from({ length: n }, (_, k) => startHz + k * stepHz);
}

function samplesOf(freqs: number[], reflections: { re: number; im: number }[]): ReflectionSample[] {
  return freqs.map((frequencyHz, k) => ({ frequencyHz, reflection: reflections[k]! }));
}

/** A point reflection ρ at distance d on a lossless line: ρ·e^{−j2πf·2d/(c·VF)}. */
function pointReflection(freqs: number[], rho: number, distanceM: number, vf = VF): ReflectionSample[] {
  return freqs.map((f) => {
    const phase = (-2 * Math.PI * f * 2 * distanceM) / (SPEED_OF_LIGHT_M_PER_S * vf);
    return { frequencyHz: f, reflection: { re: rho * Math.cos(phase), im: rho * Math.sin(phase) } };
  });
}

function errorOf(fn: () => unknown): RfInputError {
  try {
    fn();
  } catch (err) {
    if (err instanceof RfInputError) return err;
    throw err;
  }
  throw new Error('expected an RfInputError');
}

describe('windows and the inverse transform agree with numpy', () => {
  it('computes Hann and Blackman weights as numpy.hanning and numpy.blackman do (to 1e-15)', () => {
    // Reference: numpy.hanning / numpy.blackman (symmetric windows).
    for (const n of [16, 17, 801]) {
      const hann = numpyWindow('hanning', n);
      const blackman = numpyWindow('blackman', n);
      windowWeights('hann', n).forEach((w, k) => expect(Math.abs(w - hann[k]!)).toBeLessThan(1e-15));
      windowWeights('blackman', n).forEach((w, k) => expect(Math.abs(w - blackman[k]!)).toBeLessThan(1e-15));
    }
  }, NUMPY_TIMEOUT_MS);

  it('pads and inverse-transforms as numpy.fft.ifft(x, size)·size does (to 1e-9 of the largest value)', () => {
    // Reference: numpy.fft.ifft with n = size, scaled back by size.
    const n = 201;
    const x = new Float64Array(2 * n);
    for (let i = 0; i < x.length; i++) x[i] = Math.sin(i * 0.37) * (1 + (i % 7));
    const ours = inverseDftPadded(x, 2048);
    const theirs = numpyInverseDft(x, 2048);
    const scale = Math.max(...theirs.map(Math.abs));
    let worst = 0;
    for (let i = 0; i < theirs.length; i++) worst = Math.max(worst, Math.abs(ours[i]! - theirs[i]!));
    expect(worst / scale).toBeLessThan(1e-9);
  }, NUMPY_TIMEOUT_MS);
});

describe('a sweep of a line with a short section of other impedance, synthesised from the telegrapher\'s equations', () => {
  // Invented scenario: 12 m of 50 Ω cable, 1.5 m crushed to 75 Ω, then 16.5 m more to a 100 Ω load
  // (30 m in all), swept 1 MHz to 1201 MHz in 1.5 MHz steps against 50 Ω.
  const freqs = frequencies(1e6, 1.5e6, 801);
  const cable = (lengthM: number, lossDbPer100m = 0): NumpySection => ({ impedanceOhm: 50, velocityFactor: VF, lengthM, lossDbPer100m });
  const crushed = (lossDbPer100m = 0): NumpySection => ({ impedanceOhm: 75, velocityFactor: VF, lengthM: 1.5, lossDbPer100m });
  const lossless = samplesOf(freqs, numpyReflectionOfSections([cable(12), crushed(), cable(16.5)], { re: 100, im: 0 }, freqs, 50));
  const lossy = samplesOf(freqs, numpyReflectionOfSections([cable(12, 10), crushed(10), cable(16.5, 10)], { re: 100, im: 0 }, freqs, 50));

  it('states the resolution c·VF/(2·span) and the range c·VF/(2·step)', () => {
    const r = faultDistance(lossless, { velocityFactor: VF, window: 'hann', compensateLoss: false });
    const speed = SPEED_OF_LIGHT_M_PER_S * VF;
    expect(r.resolutionM).toBeCloseTo(speed / (2 * 1200e6), 12);
    expect(r.maxDistanceM).toBeCloseTo(speed / (2 * 1.5e6), 9);
    expect(r.resolutionM).toBeCloseTo(0.08244, 4);
  });

  it.each(['rectangular', 'hann', 'blackman'] as FaultWindow[])('places the two ends of the crushed section and the load where they are, within the resolution (%s window)', (window) => {
    const r = faultDistance(lossless, { velocityFactor: VF, window, compensateLoss: false });
    const strongest = r.peaks.slice(0, 3).map((p) => p.distanceM).sort((a, b) => a - b);
    const expected = [12, 13.5, 30];
    strongest.forEach((d, i) => expect(Math.abs(d - expected[i]!)).toBeLessThan(r.resolutionM));
  });

  it('reads the crushed section\'s ends as |Γ| = 0.2 and 0.2 · 0.96 and the load through it as 1/3 · 0.96² (Hann window, to 2 %)', () => {
    // Γ of a 50 → 75 Ω step is 0.2; each crossing passes 1 − 0.2² of the power, four crossings out and back.
    const r = faultDistance(lossless, { velocityFactor: VF, window: 'hann', compensateLoss: false });
    const at = (d: number) => r.peaks.find((p) => Math.abs(p.distanceM - d) < r.resolutionM)!;
    expect(at(12).reflectionMagnitude).toBeCloseTo(0.2, 2);
    // The far end of the section (75 → 50 Ω, Γ = −0.2) is seen through the near one: 0.2 · 0.96.
    expect(Math.abs(at(13.5).reflectionMagnitude / (0.2 * 0.96) - 1)).toBeLessThan(0.02);
    expect(Math.abs(at(30).reflectionMagnitude / ((1 / 3) * 0.96 ** 2) - 1)).toBeLessThan(0.02);
  });

  it('agrees with numpy\'s inverse FFT of the same windowed data to 1e-9 before any peak is picked', () => {
    for (const [window, name] of [['rectangular', 'rectangular'], ['hann', 'hanning'], ['blackman', 'blackman']] as const) {
      const r = faultDistance(lossless, { velocityFactor: VF, window, compensateLoss: false });
      // 801 points padded to the power of two at or above 8 · 800: 8192 bins over the range.
      const binM = r.maxDistanceM / 8192;
      const stride = Math.round(r.pointSpacingM / binM);
      const reference = numpyBandPassMagnitudes(lossless.map((s) => s.reflection), name, 8192);
      r.points.forEach((p, i) => expect(Math.abs(p.reflectionMagnitude - reference[i * stride]!)).toBeLessThan(1e-9));
    }
  }, NUMPY_TIMEOUT_MS);

  it('removes the line loss out and back when asked, so the load reads as on a lossless line (to 1 %)', () => {
    const plain = faultDistance(lossless, { velocityFactor: VF, window: 'hann', compensateLoss: false });
    const compensated = faultDistance(lossy, { velocityFactor: VF, window: 'hann', lossDbPer100m: 10, compensateLoss: true });
    const raw = faultDistance(lossy, { velocityFactor: VF, window: 'hann', lossDbPer100m: 10, compensateLoss: false });
    const load = (r: typeof plain) => r.peaks.find((p) => Math.abs(p.distanceM - 30) < r.resolutionM)!.reflectionMagnitude;
    expect(compensated.compensatedLossDbPer100m).toBe(10);
    expect(raw.compensatedLossDbPer100m).toBeNull();
    expect(Math.abs(load(compensated) / load(plain) - 1)).toBeLessThan(0.01);
    // 30 m of 10 dB/100 m out and back is 6 dB: half the reflected voltage.
    expect(Math.abs(load(raw) / load(plain) - 10 ** (-6 / 20))).toBeLessThan(0.01);
  });

  it('covers only the asked distance, and never lists a peak beyond it', () => {
    const r = faultDistance(lossless, { velocityFactor: VF, window: 'hann', compensateLoss: false, maxDistanceM: 20 });
    expect(r.rangeM).toBe(20);
    expect(r.points.at(-1)!.distanceM).toBeLessThanOrEqual(20);
    expect(r.peaks.every((p) => p.distanceM <= 20)).toBe(true);
    expect(r.peaks[0]!.distanceM).toBeCloseTo(12, 1);
  });
});

describe('sweeps it cannot use are refused with the reason', () => {
  const freqs = frequencies(1e6, 1e6, 64);
  const good = pointReflection(freqs, 0.5, 10);

  it('refuses unevenly spaced frequencies, naming the point and how far off it is', () => {
    const uneven = good.map((s, k) => (k === 20 ? { ...s, frequencyHz: s.frequencyHz + 0.3e6 } : s));
    const e = errorOf(() => evenFrequencyStep(uneven));
    expect(e.field).toBe('points.20.frequencyHz');
    expect(e.message).toMatch(/evenly spaced.*30\.0 % of a step/);
  });

  it('accepts frequencies rounded to within 1 % of a step', () => {
    const rounded = good.map((s, k) => (k === 20 ? { ...s, frequencyHz: s.frequencyHz + 0.009e6 } : s));
    expect(evenFrequencyStep(rounded)).toBeCloseTo(1e6, 3);
  });

  it(`refuses fewer than ${MIN_FAULT_POINTS} points`, () => {
    expect(errorOf(() => faultDistance(good.slice(0, MIN_FAULT_POINTS - 1), { velocityFactor: VF, window: 'hann', compensateLoss: false })).message).toMatch(/at least 16/);
  });

  it('refuses a distance beyond the unambiguous range and one shorter than the resolution', () => {
    const beyond = errorOf(() => faultDistance(good, { velocityFactor: VF, window: 'hann', compensateLoss: false, maxDistanceM: 500 }));
    expect(beyond.field).toBe('maxDistanceM');
    expect(beyond.message).toMatch(/fold back/);
    const finer = errorOf(() => faultDistance(good, { velocityFactor: VF, window: 'hann', compensateLoss: false, maxDistanceM: 1 }));
    expect(finer.message).toMatch(/coarser than the 1 m asked/);
  });
});

describe('identities', () => {
  it('finds a single reflection where it was put, within 1/50 of the resolution, at its own magnitude', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 32, max: 600 }),
        fc.double({ min: 0.2e6, max: 5e6, noNaN: true }),
        fc.double({ min: 0.05, max: 1, noNaN: true }),
        fc.double({ min: 0.05, max: 0.95, noNaN: true }),
        fc.constantFrom<FaultWindow>('rectangular', 'hann', 'blackman'),
        fc.double({ min: 0.5, max: 1, noNaN: true }),
        (n, stepHz, rho, where, window, vf) => {
          const freqs = frequencies(1e6, stepHz, n);
          const rangeM = (SPEED_OF_LIGHT_M_PER_S * vf) / (2 * stepHz);
          const resolutionM = rangeM / (n - 1);
          // Keep the lobe clear of the ends, where the periodic response wraps.
          const d = 3 * resolutionM + where * (rangeM - 6 * resolutionM);
          const r = faultDistance(pointReflection(freqs, rho, d, vf), { velocityFactor: vf, window, compensateLoss: false });
          const top = r.peaks[0]!;
          expect(Math.abs(top.distanceM - d)).toBeLessThan(resolutionM / 50);
          expect(Math.abs(top.reflectionMagnitude - rho)).toBeLessThan(1e-6 * rho);
        },
      ),
      { numRuns: 150 },
    );
  });

  it('reads two reflections further apart than twice the resolution as two peaks, strongest first', () => {
    fc.assert(
      fc.property(fc.double({ min: 2.5, max: 20, noNaN: true }), fc.double({ min: 0.1, max: 0.9, noNaN: true }), (apartInResolutions, ratio) => {
        const freqs = frequencies(10e6, 1e6, 401);
        const resolutionM = (SPEED_OF_LIGHT_M_PER_S * VF) / (2 * 400e6);
        const d1 = 20;
        const d2 = d1 + apartInResolutions * resolutionM;
        const a = pointReflection(freqs, 0.5, d1);
        const b = pointReflection(freqs, 0.5 * ratio, d2);
        const sum = a.map((s, k) => ({ frequencyHz: s.frequencyHz, reflection: { re: s.reflection.re + b[k]!.reflection.re, im: s.reflection.im + b[k]!.reflection.im } }));
        const r = faultDistance(sum, { velocityFactor: VF, window: 'hann', compensateLoss: false });
        expect(Math.abs(r.peaks[0]!.distanceM - d1)).toBeLessThan(r.resolutionM / 2);
        expect(r.peaks.some((p) => Math.abs(p.distanceM - d2) < r.resolutionM / 2)).toBe(true);
      }),
      { numRuns: 60 },
    );
  });
});
