import { RfInputError } from './errors.ts';
import { requireFinite, requireNonNegative } from './validate.ts';

/**
 * A reading at one end of a line.
 * @example const reading: Reading = { swr: 1.5 };
 */
export type Reading = { swr: number } | { forwardPowerW: number; reflectedPowerW: number };

/** Figures at one end of a line; powers only when the reading was in watts. */
export interface EndFigures {
  swr: number | null;
  reflectionMagnitude: number;
  returnLossDb: number | null;
  forwardPowerW?: number;
  reflectedPowerW?: number;
  netPowerW?: number;
}

/** Both ends of a line after referral through its matched loss. */
export interface ReferralResult {
  /** At the line's input (the transmitter end). */
  atInput: EndFigures;
  /** At the load (the antenna end). */
  atLoad: EndFigures;
  matchedLossDb: number;
  /** 10·log10(Pnet,source / Pnet,load); null when the load absorbs nothing (|Γ_load| = 1). */
  totalLossDb: number | null;
  lineDissipationW?: number;
}

// |Γ| a few ulps above 1 after dividing by the line's power ratio is a total reflection, not an error.
const UNIT_TOLERANCE = 1e-12;

const INCONSISTENT =
  'These readings and the stated line loss cannot both be right: referred through the line they mean the load reflects more power than reaches it. ' +
  'A lossy line makes a bad antenna look good at the transmitter, so check the meter readings and the matched-loss figure.';

function figures(rho: number): EndFigures {
  return {
    swr: rho === 1 ? null : (1 + rho) / (1 - rho),
    reflectionMagnitude: rho,
    returnLossDb: rho === 0 ? null : rho === 1 ? 0 : -20 * Math.log10(rho),
  };
}

function withPowers(rho: number, forwardPowerW: number, reflectedPowerW: number): EndFigures {
  return { ...figures(rho), forwardPowerW, reflectedPowerW, netPowerW: forwardPowerW - reflectedPowerW };
}

function readingKind(reading: Reading): 'swr' | 'powers' {
  if (typeof reading !== 'object' || reading === null) {
    throw new RfInputError('reading', 'Give the reading either as swr or as forwardPowerW with reflectedPowerW.');
  }
  const r = reading as Record<string, unknown>;
  const hasSwr = r.swr !== undefined;
  const hasPowers = r.forwardPowerW !== undefined || r.reflectedPowerW !== undefined;
  if (hasSwr && hasPowers) throw new RfInputError('reading.swr', 'Give either swr or forward/reflected power, not both.');
  if (hasSwr) return 'swr';
  if (r.forwardPowerW === undefined) throw new RfInputError('reading.forwardPowerW', 'forwardPowerW is needed together with reflectedPowerW.');
  if (r.reflectedPowerW === undefined) throw new RfInputError('reading.reflectedPowerW', 'reflectedPowerW is needed together with forwardPowerW.');
  return 'powers';
}

/**
 * Total loss of a mismatched line from its matched loss, ARRL Handbook form:
 * 10·log10((a² − ρ²)/(a·(1 − ρ²))) with a = 10^(ML/10) and ρ = |Γ| at the load. Null at ρ = 1.
 * @example handbookTotalLossDb(1, 0.5) // ≈ 1.47 dB
 */
export function handbookTotalLossDb(matchedLossDb: number, loadReflectionMagnitude: number): number | null {
  const ml = requireNonNegative(matchedLossDb, 'matchedLossDb', 'The matched loss');
  const rho = requireFinite(loadReflectionMagnitude, 'reflectionMagnitude');
  if (rho < 0 || rho > 1) throw new RfInputError('reflectionMagnitude', 'The reflection magnitude |Γ| must lie between 0 and 1.');
  if (rho === 1) return null;
  const a = 10 ** (ml / 10);
  return 10 * Math.log10((a * a - rho * rho) / (a * (1 - rho * rho)));
}

/**
 * Refers a reading between the two ends of a line by the matched-loss model of the amateur
 * handbooks: with the one-way power ratio a = 10^(−ML/10), |Γ_source| = a·|Γ_load|,
 * Pf_load = a·Pf_source and Pr_source = a·Pr_load.
 * @example referReading({ matchedLossDb: 3, direction: 'inputToLoad', reading: { swr: 1.5 } }).atLoad.swr // ≈ 2.33
 */
export function referReading(args: {
  matchedLossDb: number;
  direction: 'inputToLoad' | 'loadToInput';
  reading: Reading;
}): ReferralResult {
  const ml = requireNonNegative(args.matchedLossDb, 'matchedLossDb', 'The matched loss');
  if (args.direction !== 'inputToLoad' && args.direction !== 'loadToInput') {
    throw new RfInputError('direction', "direction must be 'inputToLoad' (readings taken at the transmitter) or 'loadToInput' (readings at the antenna).");
  }
  const a = 10 ** (-ml / 10);
  const toLoad = args.direction === 'inputToLoad';
  const reading = args.reading;

  if (readingKind(reading) === 'swr') {
    const swr = requireFinite((reading as { swr: number }).swr, 'reading.swr');
    if (swr < 1) throw new RfInputError('reading.swr', 'SWR cannot be below 1; a perfect match reads 1.');
    const rhoRead = (swr - 1) / (swr + 1);
    let rhoSource: number;
    let rhoLoad: number;
    if (toLoad) {
      rhoSource = rhoRead;
      rhoLoad = rhoRead / a;
      if (rhoLoad > 1 + UNIT_TOLERANCE) throw new RfInputError('reading.swr', INCONSISTENT);
      rhoLoad = Math.min(1, rhoLoad);
    } else {
      rhoLoad = rhoRead;
      rhoSource = a * rhoRead;
    }
    const atInput = figures(rhoSource);
    const atLoad = figures(rhoLoad);
    // The figure that was read is echoed exactly rather than recomputed through |Γ|.
    if (toLoad) atInput.swr = swr;
    else atLoad.swr = swr;
    return { atInput, atLoad, matchedLossDb: ml, totalLossDb: handbookTotalLossDb(ml, rhoLoad) };
  }

  const powers = reading as { forwardPowerW: number; reflectedPowerW: number };
  const pf = requireNonNegative(powers.forwardPowerW, 'reading.forwardPowerW', 'Forward power');
  const pr = requireNonNegative(powers.reflectedPowerW, 'reading.reflectedPowerW', 'Reflected power');
  if (pf === 0 && pr === 0) throw new RfInputError('reading.forwardPowerW', 'Forward and reflected power are both 0, which is no reading; transmit and read both meters.');
  if (pr > pf) throw new RfInputError('reading.reflectedPowerW', 'Reflected power cannot exceed forward power; check that the meter readings are not swapped.');

  let pfSource: number;
  let prSource: number;
  let pfLoad: number;
  let prLoad: number;
  if (toLoad) {
    pfSource = pf;
    prSource = pr;
    pfLoad = a * pf;
    prLoad = pr / a;
    if (prLoad > pfLoad * (1 + UNIT_TOLERANCE)) throw new RfInputError('reading.reflectedPowerW', INCONSISTENT);
    prLoad = Math.min(prLoad, pfLoad);
  } else {
    pfLoad = pf;
    prLoad = pr;
    pfSource = pf / a;
    prSource = a * pr;
  }
  const atInput = withPowers(Math.sqrt(prSource / pfSource), pfSource, prSource);
  const atLoad = withPowers(Math.sqrt(prLoad / pfLoad), pfLoad, prLoad);
  const netSource = atInput.netPowerW as number;
  const netLoad = atLoad.netPowerW as number;
  return {
    atInput,
    atLoad,
    matchedLossDb: ml,
    totalLossDb: netLoad > 0 ? 10 * Math.log10(netSource / netLoad) : null,
    lineDissipationW: netSource - netLoad,
  };
}
