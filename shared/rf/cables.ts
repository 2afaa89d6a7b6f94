import { RfInputError } from './errors.ts';
import { requirePositive } from './validate.ts';

/**
 * How a cable's matched loss depends on frequency. `k1k2`: loss in dB/100 m = k1·√f + k2·f with f
 * in MHz (conductor loss grows as √f through skin effect, dielectric loss as f). `table`: points
 * interpolated linearly in log(loss) against log(frequency), sorted by frequency.
 */
export type AttenuationModel =
  | { kind: 'k1k2'; k1: number; k2: number }
  | { kind: 'table'; points: { frequencyHz: number; lossDbPer100m: number }[] };

/** A generic cable type, named by trade designation only. */
export interface CableType {
  /** kebab-case, stable, e.g. 'rg-213'. */
  id: string;
  designation: string;
  impedanceOhm: number;
  velocityFactor: number;
  attenuation: AttenuationModel;
  /** RMS voltage rating; null where no common rating exists for the generic type. */
  maxVoltageRmsV: number | null;
  /** Where the figures come from, stated honestly. */
  source: string;
  /** Where the voltage rating comes from, or why there is none (catalog entries). */
  maxVoltageSource?: string;
  /** Parallel-conductor line whose conductors are bare or thinly covered (open-wire, window line, twin lead). */
  balanced?: boolean;
  notes?: string;
}

const MIL_FROM_MEMORY =
  'MIL-DTL-17 (US Department of Defense detail specification, cables, radio frequency, flexible and semirigid), the slash sheet of this type, and the coaxial-cable attenuation table of the ARRL Handbook (chapter on transmission lines); values from memory, approximate (±15 %).';
const GENERIC_FROM_MEMORY =
  'Coaxial-cable attenuation table of the ARRL Handbook (chapter on transmission lines), the generic type; values from memory, approximate (±20 %); individual products differ.';
const OPEN_LINE_FROM_MEMORY =
  'Parallel-conductor line table of the ARRL Antenna Book (chapter on transmission lines), dry line; values from memory, approximate (±30 %). Rain, ice and nearby objects raise the loss.';
const MIL_RATING = 'Maximum operating voltage (RMS) of the type in its MIL-DTL-17 slash sheet; from memory.';
const GENERIC_RATING = 'Typical makers\' figure for the generic type (no MIL slash sheet exists); from memory, and lower for some products.';
const NO_RATING_FOAM = 'No published rating for the generic type: it differs by maker. Give maxVoltageRmsV from the maker\'s datasheet to have it checked.';
const NO_RATING_HARDLINE = 'No rating for the generic type: the connectors fitted set the limit. Give maxVoltageRmsV from their datasheet to have it checked.';
const NO_RATING_BALANCED = 'No rating: the conductors of a balanced line are bare or thinly covered, so what limits it is arcing to whatever is nearby and burns to whoever touches it.';

/**
 * Generic cable catalog. Attenuation fits were made from two remembered points (100 MHz and
 * 1 GHz) for coaxial types and from a few remembered points for balanced lines; treat them as
 * planning figures, not as a datasheet.
 * @example CABLE_CATALOG.find((c) => c.id === 'rg-213')?.velocityFactor // 0.66
 */
export const CABLE_CATALOG: readonly CableType[] = Object.freeze([
  {
    id: 'rg-58',
    designation: 'RG-58/U',
    impedanceOhm: 50,
    velocityFactor: 0.66,
    attenuation: { kind: 'k1k2', k1: 1.39, k2: 0.0118 },
    maxVoltageRmsV: 1900,
    source: MIL_FROM_MEMORY,
    maxVoltageSource: MIL_RATING,
    notes: 'Solid polyethylene dielectric, solid centre conductor.',
  },
  {
    id: 'rg-58a',
    designation: 'RG-58A/U',
    impedanceOhm: 50,
    velocityFactor: 0.66,
    attenuation: { kind: 'k1k2', k1: 1.58, k2: 0.0156 },
    maxVoltageRmsV: 1900,
    source: MIL_FROM_MEMORY,
    maxVoltageSource: MIL_RATING,
    notes: 'Stranded centre conductor; slightly more loss than RG-58/U.',
  },
  {
    id: 'rg-8x',
    designation: 'RG-8X',
    impedanceOhm: 50,
    velocityFactor: 0.8,
    attenuation: { kind: 'k1k2', k1: 1.13, k2: 0.00863 },
    maxVoltageRmsV: 600,
    source: GENERIC_FROM_MEMORY,
    maxVoltageSource: GENERIC_RATING,
    notes: 'Foam dielectric, about 6 mm diameter; not a MIL type, so ratings vary by maker.',
  },
  {
    id: 'rg-213',
    designation: 'RG-213/U',
    impedanceOhm: 50,
    velocityFactor: 0.66,
    attenuation: { kind: 'k1k2', k1: 0.624, k2: 0.00652 },
    maxVoltageRmsV: 5000,
    source: MIL_FROM_MEMORY,
    maxVoltageSource: MIL_RATING,
    notes: 'Solid polyethylene dielectric, about 10.3 mm diameter.',
  },
  {
    id: 'rg-8-foam',
    designation: 'RG-8/U (foam dielectric)',
    impedanceOhm: 50,
    velocityFactor: 0.8,
    attenuation: { kind: 'k1k2', k1: 0.518, k2: 0.00395 },
    maxVoltageRmsV: null,
    source: GENERIC_FROM_MEMORY,
    maxVoltageSource: NO_RATING_FOAM,
    notes: 'No common voltage rating for the generic foam type; check the maker\'s figure.',
  },
  {
    id: 'rg-174',
    designation: 'RG-174/U',
    impedanceOhm: 50,
    velocityFactor: 0.66,
    attenuation: { kind: 'k1k2', k1: 2.88, k2: 0.00411 },
    maxVoltageRmsV: 1500,
    source: MIL_FROM_MEMORY,
    maxVoltageSource: MIL_RATING,
    notes: 'Miniature cable, about 2.8 mm diameter; for short jumpers and low power.',
  },
  {
    id: 'rg-59',
    designation: 'RG-59/U',
    impedanceOhm: 75,
    velocityFactor: 0.66,
    attenuation: { kind: 'k1k2', k1: 1.06, k2: 0.00599 },
    maxVoltageRmsV: 2300,
    source: MIL_FROM_MEMORY,
    maxVoltageSource: MIL_RATING,
  },
  {
    id: 'rg-6',
    designation: 'RG-6/U',
    impedanceOhm: 75,
    velocityFactor: 0.82,
    attenuation: { kind: 'k1k2', k1: 0.648, k2: 0.00084 },
    maxVoltageRmsV: null,
    source: GENERIC_FROM_MEMORY,
    maxVoltageSource: NO_RATING_FOAM,
    notes: 'Foam-dielectric distribution cable; not rated for transmitting voltages.',
  },
  {
    id: 'rg-11',
    designation: 'RG-11/U',
    impedanceOhm: 75,
    velocityFactor: 0.66,
    attenuation: { kind: 'k1k2', k1: 0.619, k2: 0.00372 },
    maxVoltageRmsV: 5000,
    source: MIL_FROM_MEMORY,
    maxVoltageSource: MIL_RATING,
    notes: 'Solid polyethylene dielectric type.',
  },
  {
    id: 'hardline-half-inch',
    designation: '1/2-inch foam-dielectric corrugated hardline',
    impedanceOhm: 50,
    velocityFactor: 0.88,
    attenuation: { kind: 'k1k2', k1: 0.211, k2: 0.0012 },
    maxVoltageRmsV: null,
    source: GENERIC_FROM_MEMORY,
    maxVoltageSource: NO_RATING_HARDLINE,
    notes: 'Corrugated copper outer conductor; voltage limits depend on the connectors fitted.',
  },
  {
    id: 'hardline-seven-eighths-inch',
    designation: '7/8-inch foam-dielectric corrugated hardline',
    impedanceOhm: 50,
    velocityFactor: 0.89,
    attenuation: { kind: 'k1k2', k1: 0.11, k2: 0.00078 },
    maxVoltageRmsV: null,
    source: GENERIC_FROM_MEMORY,
    maxVoltageSource: NO_RATING_HARDLINE,
    notes: 'Corrugated copper outer conductor; voltage limits depend on the connectors fitted.',
  },
  {
    id: 'twin-lead-300',
    designation: '300 Ω twin lead',
    impedanceOhm: 300,
    velocityFactor: 0.8,
    attenuation: {
      kind: 'table',
      points: [
        { frequencyHz: 1e6, lossDbPer100m: 0.33 },
        { frequencyHz: 10e6, lossDbPer100m: 1.1 },
        { frequencyHz: 100e6, lossDbPer100m: 3.9 },
        { frequencyHz: 1000e6, lossDbPer100m: 15 },
      ],
    },
    maxVoltageRmsV: null,
    source: OPEN_LINE_FROM_MEMORY,
    maxVoltageSource: NO_RATING_BALANCED,
    balanced: true,
    notes: 'Flat polyethylene ribbon; loss rises sharply when wet or dirty.',
  },
  {
    id: 'window-line-450',
    designation: '450 Ω window line',
    impedanceOhm: 450,
    velocityFactor: 0.91,
    attenuation: {
      kind: 'table',
      points: [
        { frequencyHz: 1e6, lossDbPer100m: 0.1 },
        { frequencyHz: 10e6, lossDbPer100m: 0.35 },
        { frequencyHz: 30e6, lossDbPer100m: 0.65 },
        { frequencyHz: 100e6, lossDbPer100m: 1.3 },
        { frequencyHz: 300e6, lossDbPer100m: 2.5 },
      ],
    },
    maxVoltageRmsV: null,
    source: OPEN_LINE_FROM_MEMORY,
    maxVoltageSource: NO_RATING_BALANCED,
    balanced: true,
    notes: 'Balanced line with windows cut in the web; keep it clear of metal.',
  },
  {
    id: 'open-wire-600',
    designation: '600 Ω open-wire line',
    impedanceOhm: 600,
    velocityFactor: 0.97,
    attenuation: {
      kind: 'table',
      points: [
        { frequencyHz: 1e6, lossDbPer100m: 0.065 },
        { frequencyHz: 10e6, lossDbPer100m: 0.21 },
        { frequencyHz: 100e6, lossDbPer100m: 0.66 },
        { frequencyHz: 300e6, lossDbPer100m: 1.2 },
      ],
    },
    maxVoltageRmsV: null,
    source: OPEN_LINE_FROM_MEMORY,
    maxVoltageSource: NO_RATING_BALANCED,
    balanced: true,
    notes: 'Parallel wires on insulating spreaders; radiation loss grows with spacing and frequency.',
  },
] satisfies CableType[]);

/**
 * Looks a catalog cable up by id.
 * @example findCable('rg-58')?.designation // 'RG-58/U'
 */
export function findCable(id: string): CableType | undefined {
  return CABLE_CATALOG.find((c) => c.id === id);
}

/**
 * Matched loss in dB/100 m at a frequency: k1·√fMHz + k2·fMHz, or log–log interpolation in a table.
 * @example cableLossDbPer100m(findCable('rg-213')!, 100e6) // ≈ 6.9
 */
export function cableLossDbPer100m(cable: CableType, frequencyHz: number): number {
  const f = requirePositive(frequencyHz, 'frequencyHz', 'The frequency');
  const model = cable.attenuation;
  if (model.kind === 'k1k2') {
    // Account-defined cables reach this too, so the coefficients are checked, not trusted.
    if (!(Number.isFinite(model.k1) && Number.isFinite(model.k2) && model.k1 >= 0 && model.k2 >= 0)) {
      throw new RfInputError('cable.attenuation', `Cable ${cable.designation} needs attenuation coefficients k1 and k2 that are finite and 0 or more.`);
    }
    const fMHz = f / 1e6;
    return model.k1 * Math.sqrt(fMHz) + model.k2 * fMHz;
  }
  const points = model.points;
  for (let i = 0; i < points.length; i++) {
    const p = points[i] as { frequencyHz: number; lossDbPer100m: number };
    const prev = i > 0 ? (points[i - 1] as { frequencyHz: number }).frequencyHz : 0;
    if (!(Number.isFinite(p.frequencyHz) && p.frequencyHz > prev)) {
      throw new RfInputError(`cable.attenuation.points.${i}.frequencyHz`, `Attenuation table points of ${cable.designation} need positive frequencies in increasing order.`);
    }
    // Interpolation is done on log(loss), which needs every loss above zero.
    if (!(Number.isFinite(p.lossDbPer100m) && p.lossDbPer100m > 0)) {
      throw new RfInputError(`cable.attenuation.points.${i}.lossDbPer100m`, `Attenuation table points of ${cable.designation} need a loss greater than 0 dB/100 m.`);
    }
  }
  const first = points[0];
  const last = points[points.length - 1];
  if (first === undefined || last === undefined) {
    throw new RfInputError('cable', `Cable ${cable.designation} has an empty attenuation table; add at least one point.`);
  }
  if (f < first.frequencyHz || f > last.frequencyHz) {
    throw new RfInputError(
      'frequencyHz',
      `Attenuation of ${cable.designation} is known from ${first.frequencyHz} Hz to ${last.frequencyHz} Hz; choose a frequency in that range.`,
    );
  }
  for (let i = 1; i < points.length; i++) {
    const hi = points[i] as { frequencyHz: number; lossDbPer100m: number };
    if (f <= hi.frequencyHz) {
      const lo = points[i - 1] as { frequencyHz: number; lossDbPer100m: number };
      if (f === hi.frequencyHz) return hi.lossDbPer100m;
      const t = Math.log(f / lo.frequencyHz) / Math.log(hi.frequencyHz / lo.frequencyHz);
      return Math.exp(Math.log(lo.lossDbPer100m) + t * Math.log(hi.lossDbPer100m / lo.lossDbPer100m));
    }
  }
  return first.lossDbPer100m;
}
