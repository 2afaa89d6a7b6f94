import { RfInputError } from './errors.ts';
import { requireFinite } from './validate.ts';

/** The mismatch figures that follow from one reflection-coefficient magnitude |Γ|. */
export interface MismatchFigures {
  /** Standing-wave ratio (1 + |Γ|)/(1 − |Γ|); null for a total reflection (|Γ| = 1). */
  swr: number | null;
  /** |Γ|, between 0 and 1. */
  reflectionMagnitude: number;
  /** Return loss −20·log10|Γ| in dB; null for a perfect match (|Γ| = 0). */
  returnLossDb: number | null;
  /** Mismatch loss −10·log10(1 − |Γ|²) in dB; null for a total reflection. */
  mismatchLossDb: number | null;
  /** Reflected / forward power, |Γ|². */
  reflectedPowerRatio: number;
  /** Delivered / forward power, 1 − |Γ|². */
  transmittedPowerRatio: number;
}

/**
 * One reading from which |Γ| follows; exactly one form per call.
 * @example const reading: MismatchInput = { forwardPowerW: 100, reflectedPowerW: 4 };
 */
export type MismatchInput =
  | { swr: number }
  | { reflectionMagnitude: number }
  | { returnLossDb: number }
  | { mismatchLossDb: number }
  | { reflectedPowerRatio: number }
  | { forwardPowerW: number; reflectedPowerW: number }
  | { forwardVoltageV: number; reflectedVoltageV: number }
  | { maxVoltageV: number; minVoltageV: number };

const FORMS: readonly (readonly string[])[] = [
  ['swr'],
  ['reflectionMagnitude'],
  ['returnLossDb'],
  ['mismatchLossDb'],
  ['reflectedPowerRatio'],
  ['forwardPowerW', 'reflectedPowerW'],
  ['forwardVoltageV', 'reflectedVoltageV'],
  ['maxVoltageV', 'minVoltageV'],
];
const KNOWN_FIELDS: readonly string[] = FORMS.flat();
const FORM_LIST = 'swr, reflectionMagnitude, returnLossDb, mismatchLossDb, reflectedPowerRatio, forwardPowerW with reflectedPowerW, forwardVoltageV with reflectedVoltageV, or maxVoltageV with minVoltageV';

/**
 * Standard mismatch relations from |Γ|: SWR = (1+|Γ|)/(1−|Γ|), RL = −20·log10|Γ|,
 * ML = −10·log10(1−|Γ|²), reflected power ratio |Γ|², transmitted 1−|Γ|².
 * @example mismatchFromReflectionMagnitude(0.2) // { swr: 1.5, returnLossDb: 13.979…, mismatchLossDb: 0.177…, … }
 */
export function mismatchFromReflectionMagnitude(reflectionMagnitude: number): MismatchFigures {
  const rho = requireFinite(reflectionMagnitude, 'reflectionMagnitude');
  if (rho < 0 || rho > 1) {
    throw new RfInputError('reflectionMagnitude', 'The reflection magnitude |Γ| must lie between 0 and 1 for a passive load.');
  }
  const rho2 = rho * rho;
  return {
    swr: rho === 1 ? null : (1 + rho) / (1 - rho),
    reflectionMagnitude: rho,
    returnLossDb: rho === 0 ? null : rho === 1 ? 0 : -20 * Math.log10(rho),
    // log1p keeps full precision for the tiny mismatch losses of good matches.
    mismatchLossDb: rho === 1 ? null : (-10 * Math.log1p(-rho2)) / Math.LN10,
    reflectedPowerRatio: rho2,
    transmittedPowerRatio: 1 - rho2,
  };
}

function presentFields(input: object): string[] {
  const record = input as Record<string, unknown>;
  return KNOWN_FIELDS.filter((k) => record[k] !== undefined);
}

function whichForm(input: MismatchInput): readonly string[] {
  if (typeof input !== 'object' || input === null) {
    throw new RfInputError('swr', `Give one reading: ${FORM_LIST}.`);
  }
  const present = presentFields(input);
  if (present.length === 0) throw new RfInputError('swr', `Give one reading: ${FORM_LIST}.`);
  const first = present[0] as string;
  const form = FORMS.find((f) => f.includes(first)) as readonly string[];
  for (const k of present) {
    if (!form.includes(k)) {
      throw new RfInputError(k, `Give only one reading at a time; ${first} and ${k} were both given. Remove one of them.`);
    }
  }
  for (const k of form) {
    if (!present.includes(k)) {
      throw new RfInputError(k, `${k} is needed together with ${first}.`);
    }
  }
  return form;
}

function nonNegative(record: Record<string, unknown>, field: string, what: string): number {
  const v = requireFinite(record[field], field);
  if (v < 0) throw new RfInputError(field, `${what} cannot be negative.`);
  return v;
}

/**
 * |Γ| from any one reading: (SWR−1)/(SWR+1), 10^(−RL/20), √(1−10^(−ML/10)), √ratio,
 * √(Pr/Pf), Vr/Vf, (Vmax−Vmin)/(Vmax+Vmin). Throws RfInputError naming the field at fault.
 * @example reflectionMagnitudeFrom({ forwardPowerW: 100, reflectedPowerW: 4 }) // 0.2
 */
export function reflectionMagnitudeFrom(input: MismatchInput): number {
  const form = whichForm(input);
  const r = input as unknown as Record<string, unknown>;
  switch (form[0]) {
    case 'swr': {
      const swr = requireFinite(r.swr, 'swr');
      if (swr < 1) throw new RfInputError('swr', 'SWR cannot be below 1; a perfect match reads 1.');
      return (swr - 1) / (swr + 1);
    }
    case 'reflectionMagnitude': {
      const rho = requireFinite(r.reflectionMagnitude, 'reflectionMagnitude');
      if (rho < 0 || rho > 1) {
        throw new RfInputError('reflectionMagnitude', 'The reflection magnitude |Γ| must lie between 0 and 1 for a passive load.');
      }
      return rho;
    }
    case 'returnLossDb': {
      const rl = requireFinite(r.returnLossDb, 'returnLossDb');
      if (rl < 0) {
        throw new RfInputError('returnLossDb', 'Return loss of a passive load cannot be negative; give it as a positive number of dB (a good match is a large number).');
      }
      return 10 ** (-rl / 20);
    }
    case 'mismatchLossDb': {
      const ml = requireFinite(r.mismatchLossDb, 'mismatchLossDb');
      if (ml < 0) throw new RfInputError('mismatchLossDb', 'Mismatch loss cannot be negative; give it as a positive number of dB (0 is a perfect match).');
      // expm1 keeps precision for small losses, where 1 − 10^(−ML/10) would cancel.
      return Math.sqrt(-Math.expm1((-ml / 10) * Math.LN10));
    }
    case 'reflectedPowerRatio': {
      const ratio = requireFinite(r.reflectedPowerRatio, 'reflectedPowerRatio');
      if (ratio < 0 || ratio > 1) {
        throw new RfInputError('reflectedPowerRatio', 'The reflected power ratio must lie between 0 and 1 (reflected power divided by forward power).');
      }
      return Math.sqrt(ratio);
    }
    case 'forwardPowerW': {
      const pf = nonNegative(r, 'forwardPowerW', 'Forward power');
      const pr = nonNegative(r, 'reflectedPowerW', 'Reflected power');
      if (pf === 0 && pr === 0) throw new RfInputError('forwardPowerW', 'Forward and reflected power are both 0, which is no reading; transmit and read both meters.');
      if (pr > pf) {
        throw new RfInputError('reflectedPowerW', 'Reflected power cannot exceed forward power at a passive load; check that the meter readings are not swapped.');
      }
      return Math.sqrt(pr / pf);
    }
    case 'forwardVoltageV': {
      const vf = nonNegative(r, 'forwardVoltageV', 'Forward voltage');
      const vr = nonNegative(r, 'reflectedVoltageV', 'Reflected voltage');
      if (vf === 0 && vr === 0) throw new RfInputError('forwardVoltageV', 'Forward and reflected voltage are both 0, which is no reading; transmit and read both detectors.');
      if (vr > vf) {
        throw new RfInputError('reflectedVoltageV', 'Reflected voltage cannot exceed forward voltage at a passive load; check that the detector readings are not swapped.');
      }
      return vr / vf;
    }
    default: {
      const vmax = requireFinite(r.maxVoltageV, 'maxVoltageV');
      const vmin = requireFinite(r.minVoltageV, 'minVoltageV');
      if (vmax <= 0) throw new RfInputError('maxVoltageV', 'The standing-wave maximum voltage must be greater than 0.');
      if (vmin < 0) throw new RfInputError('minVoltageV', 'The standing-wave minimum voltage cannot be negative.');
      if (vmax < vmin) throw new RfInputError('minVoltageV', 'The minimum voltage cannot exceed the maximum voltage; check that the two readings are not swapped.');
      return (vmax - vmin) / (vmax + vmin);
    }
  }
}

/**
 * All mismatch figures from one reading (standard relations, see mismatchFromReflectionMagnitude).
 * The figure that was given is echoed exactly rather than recomputed through |Γ|; with powers
 * the net power Pf − Pr is added.
 * @example mismatch({ swr: 2 }) // { swr: 2, reflectionMagnitude: 0.333…, returnLossDb: 9.542…, … }
 */
export function mismatch(input: MismatchInput): MismatchFigures & { netPowerW?: number } {
  const rho = reflectionMagnitudeFrom(input);
  const figures: MismatchFigures & { netPowerW?: number } = mismatchFromReflectionMagnitude(rho);
  const r = input as unknown as Record<string, number>;
  switch (whichForm(input)[0]) {
    case 'swr':
      figures.swr = r.swr as number;
      break;
    case 'returnLossDb':
      figures.returnLossDb = r.returnLossDb as number;
      break;
    case 'mismatchLossDb':
      figures.mismatchLossDb = r.mismatchLossDb as number;
      break;
    case 'reflectedPowerRatio':
      figures.reflectedPowerRatio = r.reflectedPowerRatio as number;
      figures.transmittedPowerRatio = 1 - (r.reflectedPowerRatio as number);
      break;
    case 'maxVoltageV': {
      const vmin = r.minVoltageV as number;
      figures.swr = vmin === 0 ? null : (r.maxVoltageV as number) / vmin;
      break;
    }
    case 'forwardPowerW':
      figures.netPowerW = (r.forwardPowerW as number) - (r.reflectedPowerW as number);
      break;
    default:
      break;
  }
  return figures;
}
