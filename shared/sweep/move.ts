import type { Complex } from '../rf/complex.ts';
import { DB_PER_NEPER } from '../rf/constants.ts';
import { RfInputError } from '../rf/errors.ts';
import type { LineModel } from '../rf/line.ts';
import { requireComplex, requireNonNegative, requireReferenceImpedance } from '../rf/validate.ts';
import { reflectionAgainst, type Sweep, type SweepPoint, type SweepPointInput } from './points.ts';

/**
 * Which way a sweep is moved along the feed line:
 * - `loadToInput`: the sweep was measured at the antenna; give what the transmitter end sees.
 * - `inputToLoad`: the sweep was measured at the transmitter end; give what the antenna is.
 */
export type SweepDirection = 'inputToLoad' | 'loadToInput';

/**
 * The feed line at one frequency, as sections listed from the source (transmitter) to the load.
 * A LineModel carries γ for a single frequency, so a sweep needs the line rebuilt at every point:
 * e.g. `(f) => [lineFromCable(rg213, 30, f)]`.
 */
export type LineAtFrequency = (frequencyHz: number) => LineModel | readonly LineModel[];

// Rounding on a lossless line can leave |Γ| a few ulps above 1; only a real excess means a contradiction.
const PASSIVITY_SLACK = 1e-9;

/** Γ = (Z − Z0)/(Z + Z0) for a complex Z0; an open circuit (null) reflects Γ = 1 against any Z0. */
function reflectionOf(z: Complex | null, z0: Complex, field: string): Complex {
  if (z === null) return { re: 1, im: 0 };
  const dr = z.re + z0.re;
  const di = z.im + z0.im;
  if (dr === 0 && di === 0) {
    throw new RfInputError(field, 'The impedance equals minus the line impedance (Z + Z0 = 0), so no reflection coefficient exists; check the sign of the load resistance.');
  }
  const nr = z.re - z0.re;
  const ni = z.im - z0.im;
  const den = dr * dr + di * di;
  if (Number.isFinite(den) && den > 1e-300) return { re: (nr * dr + ni * di) / den, im: (ni * dr - nr * di) / den };
  // Extreme magnitudes: scale first so the squares neither overflow nor vanish.
  const s = Math.max(Math.abs(dr), Math.abs(di));
  const sdr = dr / s;
  const sdi = di / s;
  const sden = sdr * sdr + sdi * sdi;
  return { re: (nr * sdr + ni * sdi) / s / sden, im: (ni * sdr - nr * sdi) / s / sden };
}

/** Z = Z0·(1 + Γ)/(1 − Γ); null at Γ = 1 (an ideal open) or when not finite. */
function impedanceOf(g: Complex, z0: Complex): Complex | null {
  const dr = 1 - g.re;
  const di = -g.im;
  if (dr === 0 && di === 0) return null;
  const den = dr * dr + di * di;
  const nr = 1 + g.re;
  const ni = g.im;
  const qr = (nr * dr + ni * di) / den;
  const qi = (ni * dr - nr * di) / den;
  const z = { re: z0.re * qr - z0.im * qi, im: z0.re * qi + z0.im * qr };
  return Number.isFinite(z.re) && Number.isFinite(z.im) ? z : null;
}

/**
 * Carries an impedance across one uniform section by Γ' = Γ·e^{∓2θ} against the section's Z0,
 * θ = γ·l + fixed loss in nepers: e^{−2θ} towards the source (forward transform), e^{+2θ} towards
 * the load (de-embedding, the exact inverse). A section with θ = 0 hands the impedance back untouched.
 */
function acrossSection(
  section: LineModel,
  z: Complex | null,
  towardSource: boolean,
  frequencyHz: number,
  index: number,
): Complex | null {
  const prefix = `line.${index}`;
  if (typeof section !== 'object' || section === null) throw new RfInputError(prefix, `${prefix} must describe a line section.`);
  const z0 = requireReferenceImpedance(section.characteristicOhm, `${prefix}.characteristicOhm`);
  const gamma = requireComplex(section.propagationPerM, `${prefix}.propagationPerM`);
  if (gamma.re < 0 || gamma.im < 0) {
    throw new RfInputError(`${prefix}.propagationPerM`, 'The propagation constant must have attenuation ≥ 0 Np/m and phase constant ≥ 0 rad/m; a passive line cannot amplify.');
  }
  const lengthM = requireNonNegative(section.lengthM, `${prefix}.lengthM`, 'A line length');
  const fixedDb = section.fixedLossDb === undefined ? 0 : requireNonNegative(section.fixedLossDb, `${prefix}.fixedLossDb`, 'A fixed loss');
  // The lumped loss is a matched attenuator at the section's input, as in transformLine: it scales Γ by e^{−2·loss} and adds no phase.
  const thetaRe = gamma.re * lengthM + fixedDb / DB_PER_NEPER;
  const thetaIm = gamma.im * lengthM;
  if (thetaRe === 0 && thetaIm === 0) return z;

  const g = reflectionOf(z, z0, prefix);
  const sign = towardSource ? -2 : 2;
  const m = Math.exp(sign * thetaRe);
  const ur = m * Math.cos(sign * thetaIm);
  const ui = m * Math.sin(sign * thetaIm);
  const moved = { re: g.re * ur - g.im * ui, im: g.re * ui + g.im * ur };
  const result = impedanceOf(moved, z0);

  if (!towardSource) {
    // A passive load has |Γ| ≤ 1 against a real Z0, and Re Z ≥ 0 against any Z0 (|Γ| may exceed 1 slightly for a complex Z0).
    const magnitude = Math.sqrt(moved.re * moved.re + moved.im * moved.im);
    const active = z0.im === 0 ? magnitude > 1 + PASSIVITY_SLACK : result !== null && result.re < -PASSIVITY_SLACK * Math.hypot(result.re, result.im);
    if (active) {
      throw new RfInputError(
        'line',
        `At ${frequencyHz} Hz, taking the measurement back through section ${index + 1} of the line gives |Γ| = ${magnitude.toPrecision(6)} ` +
          '(a negative resistance), which no passive antenna has. The measured data and the stated line cannot both be right: check the line\'s ' +
          'length and loss, and whether the sweep was measured at the transmitter end.',
      );
    }
  }
  return result;
}

/**
 * Moves a sweep along a feed line of sections listed source→load. `loadToInput` transforms each
 * measured load forward through the line, Γ_in = Γ_L·e^{−2γl} section by section from the load end
 * (what the transmitter end sees); `inputToLoad` is the exact inverse (de-embedding),
 * Γ_L = Γ_in·e^{+2γl} against each section's Z0, section by section from the source. `lineAt` is
 * called once per point because γ depends on frequency. Reflections in the result are against the
 * sweep's `referenceOhm`; an open circuit stays `loadOhm: null`. A point whose de-embedded load
 * would be non-passive throws RfInputError (field `line`) naming the frequency; line models are
 * validated like transformLine's (RfInputError with `line.<k>.…` fields).
 * @example moveSweepThroughLine(sweep, (f) => [lineFromCable(findCable('rg-213')!, 30, f)], 'loadToInput')
 */
export function moveSweepThroughLine(
  sweep: { referenceOhm: number; points: readonly SweepPointInput[] },
  lineAt: LineAtFrequency,
  direction: SweepDirection,
): Sweep {
  if (direction !== 'inputToLoad' && direction !== 'loadToInput') {
    throw new RfInputError('direction', 'direction must be "inputToLoad" (measured at the transmitter end) or "loadToInput" (measured at the antenna).');
  }
  if (typeof lineAt !== 'function') throw new RfInputError('line', 'Give the feed line as a function of frequency returning its sections.');
  const r = sweep.referenceOhm;
  if (typeof r !== 'number' || !Number.isFinite(r) || r <= 0) {
    throw new RfInputError('referenceOhm', 'referenceOhm must be greater than 0 ohm (for example 50).');
  }
  const towardSource = direction === 'loadToInput';
  const out: SweepPoint[] = new Array<SweepPoint>(sweep.points.length);
  for (let i = 0; i < sweep.points.length; i++) {
    const p = sweep.points[i] as SweepPointInput;
    const built = lineAt(p.frequencyHz);
    const sections: readonly LineModel[] = Array.isArray(built) ? built : [built as LineModel];
    if (sections.length === 0) throw new RfInputError('line', 'Give at least one line section, listed from the transmitter end.');
    let z: Complex | null = p.loadOhm === null ? null : requireComplex(p.loadOhm, `points.${i}.loadOhm`);
    if (towardSource) {
      for (let k = sections.length - 1; k >= 0; k--) z = acrossSection(sections[k] as LineModel, z, true, p.frequencyHz, k);
    } else {
      for (let k = 0; k < sections.length; k++) z = acrossSection(sections[k] as LineModel, z, false, p.frequencyHz, k);
    }
    let reflection: Complex | null = { re: 1, im: 0 };
    if (z !== null) {
      reflection = reflectionAgainst(z, r);
      if (reflection === null) {
        throw new RfInputError(`points.${i}.loadOhm`, `At ${p.frequencyHz} Hz the moved impedance equals −${r} ohm, for which no reflection coefficient exists.`);
      }
    }
    out[i] = { frequencyHz: p.frequencyHz, loadOhm: z, reflection };
  }
  return { referenceOhm: r, points: out };
}
