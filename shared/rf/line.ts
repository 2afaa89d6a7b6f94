import { cableLossDbPer100m, type CableType } from './cables.ts';
import { abs, div, type Complex } from './complex.ts';
import { DB_PER_NEPER, SPEED_OF_LIGHT_M_PER_S } from './constants.ts';
import { RfInputError } from './errors.ts';
import { goldenMax } from './golden-section.ts';
import type { ReflectionDetail } from './reflection.ts';
import {
  requireComplex,
  requireFinite,
  requireNonNegative,
  requirePassiveLoad,
  requirePositive,
  requireReferenceImpedance,
} from './validate.ts';

/** A uniform line section at one frequency. */
export interface LineModel {
  characteristicOhm: Complex;
  /** γ = α + jβ: α in Np/m, β in rad/m. */
  propagationPerM: Complex;
  lengthM: number;
  /** RMS voltage rating of the cable; when the computed peak exceeds it a caution is added. */
  maxVoltageRmsV?: number | null;
  /** Parallel-conductor line with bare conductors: an unrated one gets a caution about them. */
  balanced?: boolean;
  label?: string;
  /**
   * A matched loss lumped at the section's input end (connector, adapter, attenuator pad), in dB.
   * It adds to the distributed loss but has no length and no phase.
   */
  fixedLossDb?: number;
}

/** Figures at one end of a line. */
export interface EndReport {
  /** Voltage-wave Γ = (Z − Z0)/(Z + Z0) against the line's Z0. */
  reflection: ReflectionDetail;
  /** From the power-wave reflection |s| = |(Z − Z0*)/(Z + Z0)|; null for a total reflection. */
  swr: number | null;
  /** −20·log10|s|; null for a perfect match. */
  returnLossDb: number | null;
  impedanceOhm: Complex;
}

/** Result of carrying a load through a line to its input. */
export interface LineResult {
  inputOhm: Complex;
  characteristicOhm: Complex;
  electricalLengthDeg: number;
  lengthWavelengths: number;
  matchedLossDb: number;
  /** 10·log10(Pin/Pload); null when the load absorbs no power. */
  totalLossDb: number | null;
  /** totalLossDb − matchedLossDb; null with totalLossDb. */
  mismatchExtraLossDb: number | null;
  atLoad: EndReport;
  atInput: EndReport;
  /** Present when powerW is given: RMS watts. */
  power?: { inputW: number; loadW: number; lineDissipationW: number };
  /** Present when powerW is given: RMS maxima on the line, positions measured from the line input. */
  peaks?: { maxVoltageV: number; maxCurrentA: number; maxVoltageAtM: number; maxCurrentAtM: number };
  cautions: string[];
}

/**
 * Line from its datasheet figures: γ = α + jβ with α = loss/(100·DB_PER_NEPER) Np/m and
 * β = 2πf/(VF·c) rad/m; Z0 as given.
 * @example lineFromLossSpec({ impedanceOhm: { re: 50, im: 0 }, velocityFactor: 0.66, lossDbPer100m: 6.9, lengthM: 30 }, 100e6)
 */
export function lineFromLossSpec(
  spec: { impedanceOhm: Complex; velocityFactor: number; lossDbPer100m: number; lengthM: number },
  frequencyHz: number,
  fieldPrefix = 'line',
): LineModel {
  const f = requirePositive(frequencyHz, 'frequencyHz', 'The frequency');
  const z0 = requireReferenceImpedance(spec.impedanceOhm, `${fieldPrefix}.impedanceOhm`);
  const vf = requireFinite(spec.velocityFactor, `${fieldPrefix}.velocityFactor`);
  if (vf <= 0 || vf > 1) {
    throw new RfInputError(`${fieldPrefix}.velocityFactor`, 'The velocity factor must be greater than 0 and at most 1 (for example 0.66 for solid polyethylene coax).');
  }
  const loss = requireNonNegative(spec.lossDbPer100m, `${fieldPrefix}.lossDbPer100m`, 'The matched loss');
  const lengthM = requireNonNegative(spec.lengthM, `${fieldPrefix}.lengthM`, 'A line length');
  return {
    characteristicOhm: z0,
    propagationPerM: { re: loss / 100 / DB_PER_NEPER, im: (2 * Math.PI * f) / (vf * SPEED_OF_LIGHT_M_PER_S) },
    lengthM,
  };
}

/**
 * Line from per-metre constants by the telegrapher's equations: Z0 = √((R+jωL)/(G+jωC)),
 * γ = √((R+jωL)(G+jωC)), principal roots (Re ≥ 0).
 * @example lineFromRlgc({ rOhmPerM: 0.05, lHPerM: 250e-9, gSPerM: 0, cFPerM: 100e-12 }, 20, 14e6)
 */
export function lineFromRlgc(
  rlgc: { rOhmPerM: number; lHPerM: number; gSPerM: number; cFPerM: number },
  lengthM: number,
  frequencyHz: number,
  fieldPrefix = 'line',
): LineModel {
  const f = requirePositive(frequencyHz, 'frequencyHz', 'The frequency');
  const r = requireNonNegative(rlgc.rOhmPerM, `${fieldPrefix}.rOhmPerM`, 'Series resistance');
  const l = requirePositive(rlgc.lHPerM, `${fieldPrefix}.lHPerM`, 'Series inductance');
  const g = requireNonNegative(rlgc.gSPerM, `${fieldPrefix}.gSPerM`, 'Shunt conductance');
  const c = requirePositive(rlgc.cFPerM, `${fieldPrefix}.cFPerM`, 'Shunt capacitance');
  const len = requireNonNegative(lengthM, `${fieldPrefix}.lengthM`, 'A line length');
  const w = 2 * Math.PI * f;
  // Polar form: Z = |Z|·e^{j(π/2 − ζ)}, Y = |Y|·e^{j(π/2 − η)} with the small loss angles
  // ζ = atan2(R, ωL) and η = atan2(G, ωC). Then γ = √(|Z||Y|)·(sin((ζ+η)/2) + j·cos((ζ+η)/2)) and
  // Z0 = √(|Z|/|Y|)·e^{j(η−ζ)/2}. Working with the loss angles keeps α to full relative precision on
  // low-loss lines, where the rectangular product √Z·√Y would cancel down to rounding noise.
  const zeta = Math.atan2(r, w * l);
  const eta = Math.atan2(g, w * c);
  const zMag = Math.hypot(r, w * l);
  const yMag = Math.hypot(g, w * c);
  const gMag = Math.sqrt(zMag * yMag);
  const z0Mag = Math.sqrt(zMag / yMag);
  const half = (zeta + eta) / 2;
  const skew = (eta - zeta) / 2;
  return {
    characteristicOhm: { re: z0Mag * Math.cos(skew), im: z0Mag * Math.sin(skew) },
    propagationPerM: { re: gMag * Math.sin(half), im: gMag * Math.cos(half) },
    lengthM: len,
  };
}

/**
 * Line for a catalog cable: matched loss from the cable's attenuation model at the frequency,
 * then as lineFromLossSpec; carries the cable's voltage rating and designation.
 * @example lineFromCable(findCable('rg-213')!, 30, 14.2e6)
 */
export function lineFromCable(cable: CableType, lengthM: number, frequencyHz: number, fieldPrefix = 'line'): LineModel {
  const lossDbPer100m = cableLossDbPer100m(cable, frequencyHz);
  const model = lineFromLossSpec(
    { impedanceOhm: { re: cable.impedanceOhm, im: 0 }, velocityFactor: cable.velocityFactor, lossDbPer100m, lengthM },
    frequencyHz,
    fieldPrefix,
  );
  model.maxVoltageRmsV = cable.maxVoltageRmsV;
  model.label = cable.designation;
  if (cable.balanced) model.balanced = true;
  return model;
}

/**
 * A connector or adapter as a matched fixed loss with zero electrical length (a section with
 * lengthM 0 and fixedLossDb = insertion loss).
 * @example attenuatorSection(0.1, { re: 50, im: 0 }) // a 0.1 dB connector pair
 */
export function attenuatorSection(insertionLossDb: number, impedanceOhm: Complex, fieldPrefix = 'line'): LineModel {
  const loss = requireNonNegative(insertionLossDb, `${fieldPrefix}.insertionLossDb`, 'An insertion loss');
  const z0 = requireReferenceImpedance(impedanceOhm, `${fieldPrefix}.impedanceOhm`);
  return { characteristicOhm: z0, propagationPerM: { re: 0, im: 0 }, lengthM: 0, fixedLossDb: loss, label: 'fixed loss' };
}

/** The load carried to the input of one section, before any power is applied. */
interface SectionSolution {
  z0: Complex;
  zl: Complex;
  zin: Complex;
  /** Γ at the load and at the input terminal, voltage waves against z0. */
  gLr: number;
  gLi: number;
  gInr: number;
  gIni: number;
  alpha: number;
  beta: number;
  lengthM: number;
  /** Lumped loss in nepers. */
  fixedNp: number;
  /** Re θ with θ = γl + fixed loss: the one-way matched loss in nepers. */
  lossNp: number;
  /** Power per squared forward amplitude, 4·Re Z/|Z + Z0|², at the load and input (free of cancellation near |Γ| = 1). */
  kL: number;
  kIn: number;
  lossless: boolean;
}

const OPEN_AT_INPUT = 'This load on this line gives an ideal open circuit at the input (a lossless line ending in a pure reactance at exactly this length), which has no finite impedance; change the length slightly or give the line some loss.';

function isComplexLike(z: unknown): z is Complex {
  if (typeof z !== 'object' || z === null) return false;
  const { re, im } = z as Complex;
  // x − x is 0 only for finite numbers: a cheaper Number.isFinite on the hot path.
  return typeof re === 'number' && typeof im === 'number' && re - re === 0 && im - im === 0;
}

/**
 * Validates a section and gives its lumped loss in nepers (0 without one). Checks are inline and
 * allocation-free because sweeps and batches call this per point; the validate.ts helpers run only
 * to raise the error with its message.
 */
function validSectionFixedNp(line: LineModel, prefix: string): number {
  if (typeof line !== 'object' || line === null) throw new RfInputError(prefix, `${prefix} must describe a line section.`);
  const z0 = line.characteristicOhm;
  if (!isComplexLike(z0) || z0.re <= 0) requireReferenceImpedance(z0, `${prefix}.characteristicOhm`);
  const gamma = line.propagationPerM;
  if (!isComplexLike(gamma)) requireComplex(gamma, `${prefix}.propagationPerM`);
  if (gamma.re < 0 || gamma.im < 0) {
    throw new RfInputError(`${prefix}.propagationPerM`, 'The propagation constant must have attenuation ≥ 0 Np/m and phase constant ≥ 0 rad/m; a passive line cannot amplify.');
  }
  const lengthM = line.lengthM;
  if (typeof lengthM !== 'number' || !(lengthM >= 0) || lengthM === Infinity) requireNonNegative(lengthM, `${prefix}.lengthM`, 'A line length');
  return line.fixedLossDb === undefined ? 0 : requireNonNegative(line.fixedLossDb, `${prefix}.fixedLossDb`, 'A fixed loss') / DB_PER_NEPER;
}

function requireLoad(loadOhm: Complex, loadField: string): void {
  if (!isComplexLike(loadOhm) || loadOhm.re < 0) requirePassiveLoad(loadOhm, loadField);
}

/**
 * Zin = Z0·[ZL(1+u) + Z0(1−u)] / [Z0(1+u) + ZL(1−u)] with u = e^{−2θ} = ur + j·ui: Γin = Γ_L·u
 * rearranged so that neither a short, an open nor a quarter-wave (u = −1) divides by zero on the way.
 */
function impedanceThrough(z0: Complex, zl: Complex, ur: number, ui: number, loadField: string): Complex {
  const z0r = z0.re;
  const z0i = z0.im;
  const zlr = zl.re;
  const zli = zl.im;
  const pr = 1 + ur;
  const qr = 1 - ur;
  const numR = zlr * pr - zli * ui + z0r * qr + z0i * ui;
  const numI = zlr * ui + zli * pr - z0r * ui + z0i * qr;
  const denR = z0r * pr - z0i * ui + zlr * qr + zli * ui;
  const denI = z0r * ui + z0i * pr - zlr * ui + zli * qr;
  const den2 = denR * denR + denI * denI;
  if (den2 === 0) throw new RfInputError(loadField, OPEN_AT_INPUT);
  const tR = z0r * numR - z0i * numI;
  const tI = z0r * numI + z0i * numR;
  const re = (tR * denR + tI * denI) / den2;
  const im = (tI * denR - tR * denI) / den2;
  if (!(re - re === 0 && im - im === 0)) throw new RfInputError(loadField, OPEN_AT_INPUT);
  return { re, im };
}

function solveSection(line: LineModel, loadOhm: Complex, prefix: string, loadField: string): SectionSolution {
  const fixedNp = validSectionFixedNp(line, prefix);
  requireLoad(loadOhm, loadField);
  const z0 = line.characteristicOhm;
  const gamma = line.propagationPerM;
  const lengthM = line.lengthM;
  // θ = γl + fixed loss: Re θ is the one-way matched loss in nepers, Im θ the electrical length in radians.
  const lossNp = gamma.re * lengthM + fixedNp;
  const phase = gamma.im * lengthM;
  const zl = loadOhm;
  const z0r = z0.re;
  const z0i = z0.im;
  const zlr = zl.re;
  const zli = zl.im;
  const sLr = zlr + z0r;
  const sLi = zli + z0i;
  const sL2 = sLr * sLr + sLi * sLi;
  const dLr = zlr - z0r;
  const dLi = zli - z0i;
  const gLr = (dLr * sLr + dLi * sLi) / sL2;
  const gLi = (dLi * sLr - dLr * sLi) / sL2;
  const kL = (4 * zlr) / sL2;
  const lossless = lossNp === 0 && z0i === 0;

  let zin: Complex;
  let gInr: number;
  let gIni: number;
  let kIn: number;
  if (lossNp === 0 && phase === 0) {
    // Zero length must hand back the load bit for bit, not a round trip through Γ.
    zin = { re: zlr, im: zli };
    gInr = gLr;
    gIni = gLi;
    kIn = kL;
  } else {
    const m = Math.exp(-2 * lossNp);
    const ur = m * Math.cos(2 * phase);
    const ui = -m * Math.sin(2 * phase);
    zin = impedanceThrough(z0, zl, ur, ui, loadField);
    gInr = gLr * ur - gLi * ui;
    gIni = gLr * ui + gLi * ur;
    if (lossless) {
      // No loss and a real Z0: the forward wave keeps its amplitude and the input takes exactly the
      // load's power, so a reactive load stays reactive instead of gaining a rounding-size resistance
      // (which would let any power through and report absurd voltages).
      if (zlr === 0) zin.re = 0;
      kIn = kL;
    } else {
      const sIr = zin.re + z0r;
      const sIi = zin.im + z0i;
      kIn = (4 * zin.re) / (sIr * sIr + sIi * sIi);
    }
  }
  return { z0, zl, zin, gLr, gLi, gInr, gIni, alpha: gamma.re, beta: gamma.im, lengthM, fixedNp, lossNp, kL, kIn, lossless };
}

function endReport(z: Complex, gr: number, gi: number, z0: Complex): EndReport {
  // Γ is bounded by the passive-load checks, so √(re² + im²) cannot overflow here.
  const magnitude = Math.sqrt(gr * gr + gi * gi);
  // The power-wave magnitude equals |Γ| for a real Z0, so the extra division is only paid for complex Z0.
  let s = magnitude;
  if (z0.im !== 0) s = abs(div({ re: z.re - z0.re, im: z.im + z0.im }, { re: z.re + z0.re, im: z.im + z0.im }));
  if (s > 1) s = 1;
  return {
    reflection: { re: gr, im: gi, magnitude, angleDeg: (Math.atan2(gi, gr) * 180) / Math.PI },
    swr: s === 1 ? null : (1 + s) / (1 - s),
    returnLossDb: s === 0 ? null : s === 1 ? 0 : -20 * Math.log10(s),
    impedanceOhm: z,
  };
}

/** Squared |V| or |I|·|Z0| per squared forward amplitude at distance d from the load, inside the distributed part. */
function envelopeAt(sol: SectionSolution, gammaLMag: number, gammaLArg: number, sign: 1 | -1, d: number): number {
  const { alpha, beta, lengthM } = sol;
  const forward = Math.exp(-2 * alpha * (lengthM - d));
  const reflected = gammaLMag * gammaLMag * Math.exp(-2 * alpha * (lengthM + d));
  const cross = 2 * gammaLMag * Math.exp(-2 * alpha * lengthM) * Math.cos(2 * beta * d - gammaLArg);
  return forward + reflected + sign * cross;
}

const SAMPLES_PER_WINDOW = 33;

/**
 * Maximum of f over [0, lengthM]. The upper envelope of a standing wave on a uniform line is convex,
 * and the wave touches it once every half wavelength, so the maximum lies within half a wavelength
 * of one end: only those two windows are searched, by sampling then golden-section refinement.
 */
function maxOverLine(f: (d: number) => number, lengthM: number, beta: number): { at: number; value: number } {
  if (lengthM === 0) return { at: 0, value: f(0) };
  const halfWave = beta > 0 ? Math.PI / beta : Infinity;
  const windows: [number, number][] = halfWave >= lengthM ? [[0, lengthM]] : [[0, halfWave], [lengthM - halfWave, lengthM]];
  let best = { at: 0, value: f(0) };
  for (const [lo, hi] of windows) {
    const step = (hi - lo) / (SAMPLES_PER_WINDOW - 1);
    const xs: number[] = [];
    const ys: number[] = [];
    for (let i = 0; i < SAMPLES_PER_WINDOW; i++) {
      const x = i === SAMPLES_PER_WINDOW - 1 ? hi : lo + i * step;
      xs.push(x);
      ys.push(f(x));
    }
    const tol = Math.max(step * 1e-9, Number.EPSILON * hi);
    for (let i = 0; i < SAMPLES_PER_WINDOW; i++) {
      const y = ys[i] as number;
      const left = i > 0 ? (ys[i - 1] as number) : -Infinity;
      const right = i < SAMPLES_PER_WINDOW - 1 ? (ys[i + 1] as number) : -Infinity;
      if (y < left || y < right) continue;
      if (y > best.value) best = { at: xs[i] as number, value: y };
      const refined = goldenMax(f, xs[Math.max(0, i - 1)] as number, xs[Math.min(SAMPLES_PER_WINDOW - 1, i + 1)] as number, tol);
      if (refined.value > best.value) best = refined;
    }
  }
  return best;
}

function voltageCaution(maxVoltageV: number, ratingV: number, label: string | undefined): string {
  const what = label ?? 'the line';
  return (
    `Caution: the computed RMS voltage on ${what} reaches ${maxVoltageV.toPrecision(4)} V, above its rating of ${ratingV} V RMS. ` +
    'Voltage this high can break down the cable or connectors and can burn anyone who touches them. Reduce power or improve the match, ' +
    'and follow local electrical codes and licensed practice for high-power installations.'
  );
}

/**
 * RMS voltage above which a line with no known rating gets a caution. 500 V is below the lowest
 * rating in the catalog (600 V for RG-8X), so an unrated line is warned about no later than a rated
 * coax would be; it is about what 500 W reaches on a matched 450 Ω window line, and standing-wave
 * peaks of this size arc across wet spreaders and give deep RF burns on contact (common practice).
 * @example UNRATED_LINE_CAUTION_V // 500
 */
export const UNRATED_LINE_CAUTION_V = 500;

function unratedCaution(maxVoltageV: number, line: LineModel): string {
  const v = maxVoltageV.toPrecision(4);
  if (line.balanced) {
    return (
      `Caution: the computed RMS voltage on ${line.label ?? 'the line'} reaches ${v} V, and its conductors are bare. At this voltage they can arc to anything near them and burn anyone who touches them, ` +
      'even at a distance of a few millimetres. Keep the line out of reach and clear of metal, walls and wet surfaces, and follow local electrical codes and licensed practice for high-power installations.'
    );
  }
  return (
    `Caution: the computed RMS voltage on ${line.label ?? 'the line'} reaches ${v} V, and no voltage rating is known for it. Check the ratings of the cable and its connectors before transmitting at this power ` +
    '(give maxVoltageRmsV to have them checked); voltage this high can break down insulation and burn anyone who touches an exposed conductor. Follow local electrical codes and licensed practice.'
  );
}

/**
 * The cautions for a line's highest RMS voltage: above its rating when it has one, else above
 * UNRATED_LINE_CAUTION_V.
 * @example voltageCautions(2200, lineFromCable(findCable('window-line-450')!, 30, 7.1e6)).length // 1
 */
export function voltageCautions(maxVoltageV: number, line: LineModel): string[] {
  const rating = line.maxVoltageRmsV;
  if (typeof rating === 'number' && Number.isFinite(rating)) return maxVoltageV > rating ? [voltageCaution(maxVoltageV, rating, line.label)] : [];
  // An unrated connector carries the voltage of the cable beside it, which is cautioned already.
  if (line.lengthM === 0 && line.fixedLossDb !== undefined) return [];
  return maxVoltageV > UNRATED_LINE_CAUTION_V ? [unratedCaution(maxVoltageV, line)] : [];
}

/** RMS voltage and current maxima on a line and their distances from its input. */
export interface LinePeaks {
  maxVoltageV: number;
  maxCurrentA: number;
  maxVoltageAtM: number;
  maxCurrentAtM: number;
}

/**
 * The highest RMS voltage and current a line can carry for forward and reflected power read at its
 * input, by the matched-loss model: forward power falls and reflected power rises by each section's
 * matched loss towards the load, and the standing wave's upper envelope is
 * |V| = |Z0|/√(Re Z0)·(√Pf + √Pr), |I| = (√Pf + √Pr)/√(Re Z0), largest at one end of each section
 * (a sum of exponentials is convex). A reading has no phase, so the wave's crest may lie up to a
 * quarter wavelength from the place given: these are the most the line can carry. Cautions as for a
 * transformed line (voltageCautions), prefixed by the section when there are several.
 * @example readingPeaks([lineFromCable(findCable('window-line-450')!, 30, 7.1e6)], 1500, 800).peaks.maxVoltageV // ≈ 2.1 kV
 */
export function readingPeaks(sectionsFromInput: readonly LineModel[], forwardPowerW: number, reflectedPowerW: number): { peaks: LinePeaks; cautions: string[] } {
  const peaks: LinePeaks = { maxVoltageV: -1, maxCurrentA: -1, maxVoltageAtM: 0, maxCurrentAtM: 0 };
  const cautions: string[] = [];
  let pf = forwardPowerW;
  let pr = reflectedPowerW;
  let offsetM = 0;
  sectionsFromInput.forEach((line, k) => {
    const z0 = line.characteristicOhm;
    const lossDb = DB_PER_NEPER * line.propagationPerM.re * line.lengthM + (line.fixedLossDb ?? 0);
    const ratio = 10 ** (-lossDb / 10);
    const vScale = Math.hypot(z0.re, z0.im) / Math.sqrt(z0.re);
    const iScale = 1 / Math.sqrt(z0.re);
    let sectionMaxV = 0;
    for (const [atM, f, r] of [
      [offsetM, pf, pr],
      [offsetM + line.lengthM, pf * ratio, pr / ratio],
    ] as const) {
      const envelope = Math.sqrt(f) + Math.sqrt(r);
      const v = vScale * envelope;
      const i = iScale * envelope;
      sectionMaxV = Math.max(sectionMaxV, v);
      if (v > peaks.maxVoltageV) {
        peaks.maxVoltageV = v;
        peaks.maxVoltageAtM = atM;
      }
      if (i > peaks.maxCurrentA) {
        peaks.maxCurrentA = i;
        peaks.maxCurrentAtM = atM;
      }
    }
    for (const c of voltageCautions(sectionMaxV, line)) cautions.push(sectionsFromInput.length > 1 ? `Section ${k + 1}: ${c}` : c);
    pf *= ratio;
    pr /= ratio;
    offsetM += line.lengthM;
  });
  return { peaks, cautions };
}

function resultFromSolution(sol: SectionSolution, line: LineModel, powerW: number | undefined): LineResult {
  const electricalRad = sol.beta * sol.lengthM;
  const matchedLossDb = sol.lossNp * DB_PER_NEPER;
  let totalLossDb: number | null = null;
  let mismatchExtraLossDb: number | null = null;
  if (sol.kL > 0 && sol.kIn > 0) {
    // Taken from the ratio directly rather than as total − matched, which would cancel for good matches.
    mismatchExtraLossDb = sol.lossless ? 0 : 10 * Math.log10(sol.kIn / sol.kL);
    totalLossDb = matchedLossDb + mismatchExtraLossDb;
  }
  const result: LineResult = {
    inputOhm: sol.zin,
    characteristicOhm: sol.z0,
    electricalLengthDeg: (electricalRad * 180) / Math.PI,
    lengthWavelengths: electricalRad / (2 * Math.PI),
    matchedLossDb,
    totalLossDb,
    mismatchExtraLossDb,
    atLoad: endReport(sol.zl, sol.gLr, sol.gLi, sol.z0),
    atInput: endReport(sol.zin, sol.gInr, sol.gIni, sol.z0),
    cautions: [],
  };
  if (powerW === undefined) return result;

  const p = requireNonNegative(powerW, 'powerW', 'Power');
  if (p > 0 && !(sol.kIn > 0)) {
    throw new RfInputError('powerW', 'The input of this line is a pure reactance (a lossless line ending in a reactive load), so no net power can flow into it; set powerW to 0 or give the load some resistance.');
  }
  // F² is the squared RMS forward-wave amplitude at the input terminal; its phase does not matter.
  const f2 = p === 0 ? 0 : p / sol.kIn;
  const loadW = sol.lossless ? p : f2 * Math.exp(-2 * sol.lossNp) * sol.kL;
  result.power = { inputW: p, loadW, lineDissipationW: p - loadW };

  const gMag = Math.hypot(sol.gLr, sol.gLi);
  const gArg = Math.atan2(sol.gLi, sol.gLr);
  const inside = f2 * Math.exp(-2 * sol.fixedNp);
  const z0Abs2 = sol.z0.re * sol.z0.re + sol.z0.im * sol.z0.im;
  const v = maxOverLine((d) => envelopeAt(sol, gMag, gArg, 1, d), sol.lengthM, sol.beta);
  const i = maxOverLine((d) => envelopeAt(sol, gMag, gArg, -1, d), sol.lengthM, sol.beta);
  let maxV2 = inside * v.value;
  let maxVAt = sol.lengthM - v.at;
  let maxI2 = (inside * i.value) / z0Abs2;
  let maxIAt = sol.lengthM - i.at;
  if (sol.fixedNp > 0) {
    // The lumped loss sits at the input terminal, where the waves are larger than just inside it.
    const vIn2 = f2 * ((1 + sol.gInr) ** 2 + sol.gIni ** 2);
    const iIn2 = (f2 * ((1 - sol.gInr) ** 2 + sol.gIni ** 2)) / z0Abs2;
    if (vIn2 >= maxV2) {
      maxV2 = vIn2;
      maxVAt = 0;
    }
    if (iIn2 >= maxI2) {
      maxI2 = iIn2;
      maxIAt = 0;
    }
  }
  result.peaks = { maxVoltageV: Math.sqrt(maxV2), maxCurrentA: Math.sqrt(maxI2), maxVoltageAtM: maxVAt, maxCurrentAtM: maxIAt };
  result.cautions.push(...voltageCautions(result.peaks.maxVoltageV, line));
  return result;
}

function requireFrequency(frequencyHz: number): void {
  requirePositive(frequencyHz, 'frequencyHz', 'The frequency');
}

/**
 * Input impedance only, Zin = Z0·(ZL + Z0·tanh γl)/(Z0 + ZL·tanh γl), for sweeps where nothing else
 * is needed. Same validation and result as transformLine(...).inputOhm.
 * @example lineInputImpedance(lineFromLossSpec({ impedanceOhm: { re: 50, im: 0 }, velocityFactor: 1, lossDbPer100m: 0, lengthM: 5 }, 15e6), { re: 25, im: 0 }) // ≈ { re: 100, im: 0 }
 */
export function lineInputImpedance(line: LineModel, loadOhm: Complex): Complex {
  // The same steps as solveSection without the reflection and power figures a sweep does not need.
  const fixedNp = validSectionFixedNp(line, 'line');
  requireLoad(loadOhm, 'loadOhm');
  const lossNp = line.propagationPerM.re * line.lengthM + fixedNp;
  const phase = line.propagationPerM.im * line.lengthM;
  if (lossNp === 0 && phase === 0) return { re: loadOhm.re, im: loadOhm.im };
  const m = Math.exp(-2 * lossNp);
  const zin = impedanceThrough(line.characteristicOhm, loadOhm, m * Math.cos(2 * phase), -m * Math.sin(2 * phase), 'loadOhm');
  // As in solveSection: a lossless line ending in a reactance stays a reactance.
  if (loadOhm.re === 0 && lossNp === 0 && line.characteristicOhm.im === 0) zin.re = 0;
  return zin;
}

/**
 * Transforms a load through a lossy line by the exact wave solution V(d) = A·e^{γd} + B·e^{−γd},
 * I(d) = (A·e^{γd} − B·e^{−γd})/Z0 (d from the load): input impedance, matched and total loss,
 * SWR and return loss at both ends from the power-wave reflection, and with a net input power
 * (RMS W) the delivered power, the line dissipation and the true voltage and current maxima.
 * @example transformLine(lineFromCable(findCable('rg-213')!, 30, 14.2e6), { re: 100, im: 0 }, 14.2e6, 100)
 */
export function transformLine(line: LineModel, loadOhm: Complex, frequencyHz: number, powerW?: number): LineResult {
  requireFrequency(frequencyHz);
  const sol = solveSection(line, loadOhm, 'line', 'loadOhm');
  return resultFromSolution(sol, line, powerW);
}

/**
 * A line of several sections, listed from the source: each section's load is the next section's
 * input impedance; totals are for the whole line (total loss = 10·log10(Pin/Pload) end to end),
 * peak positions are measured from the input of the first section. Errors name `${field}.k`, the
 * section's place in the request.
 * @example cascadeLines([attenuatorSection(0.1, { re: 50, im: 0 }), lineFromCable(findCable('rg-8x')!, 20, 7.1e6)], { re: 75, im: 0 }, 7.1e6, 100)
 */
export function cascadeLines(
  sectionsFromSource: LineModel[],
  loadOhm: Complex,
  frequencyHz: number,
  powerW?: number,
  field = 'sections',
): LineResult & { sections: LineResult[] } {
  requireFrequency(frequencyHz);
  if (!Array.isArray(sectionsFromSource) || sectionsFromSource.length === 0) {
    throw new RfInputError(field, 'Give at least one line section, listed from the source end.');
  }
  const n = sectionsFromSource.length;
  const solutions: SectionSolution[] = new Array<SectionSolution>(n);
  let load = loadOhm;
  for (let k = n - 1; k >= 0; k--) {
    const prefix = `${field}.${k}`;
    // Only the real load can be a bad input; trouble at an inner junction belongs to the section it feeds.
    const sol = solveSection(sectionsFromSource[k] as LineModel, load, prefix, k === n - 1 ? 'loadOhm' : prefix);
    solutions[k] = sol;
    load = sol.zin;
    // A lossless section ending in a reactance gives Re Zin = 0 up to rounding; a rounding residue
    // below zero must not be mistaken for an active load by the next section.
    if (load.re < 0 && load.re > -1e-12 * abs(load)) load = { re: 0, im: load.im };
  }
  const results: LineResult[] = [];
  let sectionPower = powerW;
  let offsetM = 0;
  let peaks: LineResult['peaks'];
  const cautions: string[] = [];
  for (let k = 0; k < n; k++) {
    const line = sectionsFromSource[k] as LineModel;
    const r = resultFromSolution(solutions[k] as SectionSolution, line, sectionPower);
    results.push(r);
    for (const c of r.cautions) cautions.push(`Section ${k + 1}: ${c}`);
    if (r.peaks) {
      if (!peaks) peaks = { maxVoltageV: -1, maxCurrentA: -1, maxVoltageAtM: 0, maxCurrentAtM: 0 };
      if (r.peaks.maxVoltageV > peaks.maxVoltageV) {
        peaks.maxVoltageV = r.peaks.maxVoltageV;
        peaks.maxVoltageAtM = offsetM + r.peaks.maxVoltageAtM;
      }
      if (r.peaks.maxCurrentA > peaks.maxCurrentA) {
        peaks.maxCurrentA = r.peaks.maxCurrentA;
        peaks.maxCurrentAtM = offsetM + r.peaks.maxCurrentAtM;
      }
    }
    sectionPower = r.power?.loadW;
    offsetM += line.lengthM;
  }
  const first = results[0] as LineResult;
  const last = results[n - 1] as LineResult;
  let matchedLossDb = 0;
  let totalLossDb: number | null = 0;
  let electricalLengthDeg = 0;
  let lengthWavelengths = 0;
  for (const r of results) {
    matchedLossDb += r.matchedLossDb;
    totalLossDb = totalLossDb === null || r.totalLossDb === null ? null : totalLossDb + r.totalLossDb;
    electricalLengthDeg += r.electricalLengthDeg;
    lengthWavelengths += r.lengthWavelengths;
  }
  const combined: LineResult & { sections: LineResult[] } = {
    inputOhm: first.inputOhm,
    characteristicOhm: first.characteristicOhm,
    electricalLengthDeg,
    lengthWavelengths,
    matchedLossDb,
    totalLossDb,
    mismatchExtraLossDb: totalLossDb === null ? null : totalLossDb - matchedLossDb,
    atLoad: last.atLoad,
    atInput: first.atInput,
    cautions,
    sections: results,
  };
  if (first.power && last.power) {
    combined.power = { inputW: first.power.inputW, loadW: last.power.loadW, lineDissipationW: first.power.inputW - last.power.loadW };
  }
  if (peaks) combined.peaks = peaks;
  return combined;
}
