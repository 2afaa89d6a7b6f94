import { RfInputError } from '../../../../shared/rf/errors.ts';
import { toComplex } from '../../../../shared/schemas/common.ts';
import type { FeedlineSection } from '../../../../shared/schemas/feedlines.ts';
import type { SweepPointInput as SweepPointJson } from '../../../../shared/schemas/sweeps.ts';
import { analyseSweep, DEFAULT_THRESHOLD_SWR, type SweepAnalysis, type SweepMask } from '../../../../shared/sweep/analyse.ts';
import { parseSweepCsv } from '../../../../shared/sweep/csv.ts';
import { SweepFormatError } from '../../../../shared/sweep/errors.ts';
import { moveSweepThroughLine, type SweepDirection } from '../../../../shared/sweep/move.ts';
import { impedanceAgainst, type SweepPointInput } from '../../../../shared/sweep/points.ts';
import { parseTouchstone } from '../../../../shared/sweep/touchstone.ts';
import { ApiError } from '../../../http/problem.ts';
import { sectionModels, type CalculationEnv } from '../calc/line-models.ts';

export type FileFormat = 'touchstone' | 'csv';

/** The format of an uploaded file: by its extension, else CSV when a header names `frequency_hz`, else Touchstone. */
export function detectFormat(fileName: string | undefined, text: string): FileFormat {
  const ext = /\.([A-Za-z0-9]+)$/.exec(fileName ?? '')?.[1]?.toLowerCase();
  if (ext === 's1p' || ext === 'ts') return 'touchstone';
  if (ext === 'csv') return 'csv';
  return /frequency_hz/i.test(text.slice(0, 4096)) ? 'csv' : 'touchstone';
}

/**
 * Reads an uploaded sweep file. A file that cannot be read is a 400 problem naming the line and the
 * reason (`errors: [{ field: 'file', message: 'line 12: …' }]`).
 */
export function readSweepFile(
  buffer: Buffer,
  options: { fileName?: string; format?: FileFormat; referenceOhm?: number },
): { format: FileFormat; referenceOhm: number; points: SweepPointInput[] } {
  const text = buffer.toString('utf8');
  const format = options.format ?? detectFormat(options.fileName, text);
  try {
    const sweep = format === 'touchstone' ? parseTouchstone(text) : parseSweepCsv(text, { referenceOhm: options.referenceOhm ?? 50 });
    return { format, referenceOhm: options.referenceOhm ?? sweep.referenceOhm, points: sweep.points };
  } catch (err) {
    if (!(err instanceof SweepFormatError)) throw err;
    const what = format === 'touchstone' ? 'Touchstone' : 'CSV';
    const message = `line ${err.line}: ${err.reason}`;
    throw new ApiError('validation', `The file could not be read as ${what}: ${message}`, { errors: [{ field: 'file', message }], cause: err });
  }
}

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
  options: { referenceOhm: number; thresholdSwr?: number; mask?: SweepMask; move?: SweepMove; env: CalculationEnv },
): { moved: SweepPointInput[] | null; analysis: SweepAnalysis; thresholdSwr: number } {
  const thresholdSwr = options.thresholdSwr ?? DEFAULT_THRESHOLD_SWR;
  let moved: SweepPointInput[] | null = null;
  const move = options.move;
  if (move) {
    try {
      // Validates the points first, so a bad frequency is reported as such and not as a line problem.
      analyseSweep(measured, { referenceOhm: options.referenceOhm, thresholdSwr });
      moved = moveSweepThroughLine({ referenceOhm: options.referenceOhm, points: measured }, (f) => sectionModels(move.sections, f, options.env, 'line'), move.direction).points;
    } catch (err) {
      throw renamed(err, move);
    }
  }
  const analysis = analyseSweep(moved ?? measured, { referenceOhm: options.referenceOhm, thresholdSwr, mask: options.mask });
  return { moved, analysis, thresholdSwr };
}
