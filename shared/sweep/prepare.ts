import type { CableLookup } from '../calculations/cable-lookup.ts';
import { sectionModels } from '../calculations/line-models.ts';
import { RfInputError } from '../rf/errors.ts';
import { toComplex } from '../schemas/common.ts';
import type { FeedlineSection } from '../schemas/feedlines.ts';
import type { SweepPointInput as SweepPointJson } from '../schemas/sweeps.ts';
import { analyseSweep, DEFAULT_THRESHOLD_SWR, type SweepAnalysis, type SweepMask } from './analyse.ts';
import { moveSweepThroughLine, type SweepDirection } from './move.ts';
import { impedanceAgainst, type SweepPointInput } from './points.ts';

/** JSON points to the impedance form the analysis takes; Γ is read against `referenceOhm`. */
export function pointsFromJson(points: readonly SweepPointJson[], referenceOhm: number): SweepPointInput[] {
  return points.map((p) => ({
    frequencyHz: p.frequencyHz,
    loadOhm: p.reflection !== undefined ? impedanceAgainst(p.reflection, referenceOhm) : p.loadOhm === null || p.loadOhm === undefined ? null : toComplex(p.loadOhm),
  }));
}

export interface SweepMove {
  sections: FeedlineSection[];
  direction: SweepDirection;
  /** Request field the sections came from, for error messages (`line` or `feedlineId`). */
  field: 'line' | 'feedlineId';
  /** True when `line` was one LineSpec rather than an array: errors then name `line.x`, not `line.0.x`. */
  single: boolean;
}

function renamed(err: unknown, move: SweepMove): unknown {
  if (!(err instanceof RfInputError)) return err;
  let field = err.field;
  if (move.field === 'feedlineId' && field.startsWith('line')) field = 'feedlineId';
  else if (move.single && field.startsWith('line.0')) field = `line${field.slice('line.0'.length)}`;
  if (field === err.field) return err;
  const message = move.field === 'feedlineId' ? `in the saved feed line, ${err.field.replace(/^line/, 'section')}: ${err.message}` : err.message;
  return new RfInputError(field, message);
}

/**
 * Moves the measured points through the line when one is given, then analyses them against the
 * reference: the stored sweep keeps both point sets, so later changes to cables or feed lines
 * never alter it.
 */
export function prepareSweep(
  measured: SweepPointInput[],
  options: { referenceOhm: number; thresholdSwr?: number | undefined; mask?: SweepMask | undefined; move?: SweepMove | undefined; cables: CableLookup },
): { moved: SweepPointInput[] | null; analysis: SweepAnalysis; thresholdSwr: number } {
  const thresholdSwr = options.thresholdSwr ?? DEFAULT_THRESHOLD_SWR;
  let moved: SweepPointInput[] | null = null;
  const move = options.move;
  if (move) {
    try {
      // Validates the points first, so a bad frequency is reported as such and not as a line problem.
      analyseSweep(measured, { referenceOhm: options.referenceOhm, thresholdSwr });
      moved = moveSweepThroughLine({ referenceOhm: options.referenceOhm, points: measured }, (f) => sectionModels(move.sections, f, options.cables, 'line'), move.direction).points;
    } catch (err) {
      throw renamed(err, move);
    }
  }
  const analysis = analyseSweep(moved ?? measured, { referenceOhm: options.referenceOhm, thresholdSwr, mask: options.mask });
  return { moved, analysis, thresholdSwr };
}
