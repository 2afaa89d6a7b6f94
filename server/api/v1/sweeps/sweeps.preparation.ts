import type { CableType } from '../../../../shared/rf/cables.ts';
import { findCable } from '../../../../shared/rf/cables.ts';
import { RfInputError } from '../../../../shared/rf/errors.ts';
import { analyseSweep, type AnalysedPoint, type SweepMask, type SweepSummary, type SweepVerdict } from '../../../../shared/sweep/analyse.ts';
import { SweepFormatError } from '../../../../shared/sweep/errors.ts';
import { detectFormat, readSweepText, type FileFormat } from '../../../../shared/sweep/file-format.ts';
import { prepareSweep, type SweepMove } from '../../../../shared/sweep/prepare.ts';
import { exportChunk, type ExportFormat } from './sweeps.export.ts';
import { packPoints, unpackPoints } from './sweeps.points.ts';

// The CPU-heavy part of storing or re-judging a sweep (reading the file, moving it through a line,
// analysing every point, packing the points), as plain data in and out so that it can run in a
// worker thread (sweeps.preparer.ts) and leave the event loop to other requests.

/** The sweep of an upload: the file's bytes, or points already packed (JSON uploads). */
export type PreparationSource =
  | { kind: 'file'; bytes: Uint8Array; fileName: string | undefined; format: FileFormat | undefined }
  | { kind: 'packed'; bytes: Uint8Array };

export interface PrepareTask {
  task: 'prepare';
  source: PreparationSource;
  /** Overrides the file's own reference (always given for packed points). */
  referenceOhm: number | undefined;
  thresholdSwr: number | undefined;
  mask: SweepMask | null;
  move: SweepMove | undefined;
  /** The organisation's cables the line names (the catalog is in the worker already). */
  accountCables: CableType[];
  /** How many analysed points to answer with (the first page). */
  firstPage: number;
}

export interface JudgeTask {
  task: 'judge';
  packed: Uint8Array;
  referenceOhm: number;
  thresholdSwr: number;
  mask: SweepMask | null;
}

/** One slice of an export: formatting 1,000 points as CSV or NDJSON is the CPU of a stream. */
export interface FormatTask {
  task: 'format';
  packed: Uint8Array;
  referenceOhm: number;
  format: ExportFormat;
}

export type PreparationTask = PrepareTask | JudgeTask | FormatTask;

export interface PreparedSweep {
  format: FileFormat | 'json';
  referenceOhm: number;
  thresholdSwr: number;
  measured: Uint8Array;
  moved: Uint8Array | null;
  summary: SweepSummary;
  verdict: SweepVerdict | null;
  firstPoints: AnalysedPoint[];
}

export interface JudgedSweep {
  summary: SweepSummary;
  verdict: SweepVerdict | null;
}

/** An error as it crosses the thread boundary; `reviveError` makes the original class again. */
export type PreparationFailure =
  | { type: 'format'; line: number; reason: string; format: FileFormat }
  | { type: 'rf'; field: string; message: string }
  | { type: 'other'; message: string; stack: string | undefined };

/** Thrown for a file that cannot be read, with the format it was read as. */
export class SweepFileError extends SweepFormatError {
  constructor(line: number, reason: string, readonly format: FileFormat) {
    super(line, reason);
  }
}

function prepare(t: PrepareTask): PreparedSweep {
  let format: FileFormat | 'json' = 'json';
  let referenceOhm: number;
  let measured;
  if (t.source.kind === 'file') {
    const text = Buffer.from(t.source.bytes.buffer, t.source.bytes.byteOffset, t.source.bytes.byteLength).toString('utf8');
    format = t.source.format ?? detectFormat(t.source.fileName, text);
    try {
      const read = readSweepText(text, { format, referenceOhm: t.referenceOhm });
      referenceOhm = read.referenceOhm;
      measured = read.points;
    } catch (err) {
      if (err instanceof SweepFormatError) throw new SweepFileError(err.line, err.reason, format);
      throw err;
    }
  } else {
    referenceOhm = t.referenceOhm ?? 50;
    measured = unpackPoints(Buffer.from(t.source.bytes.buffer, t.source.bytes.byteOffset, t.source.bytes.byteLength));
  }
  const byId = new Map(t.accountCables.map((c) => [c.id, c]));
  const cables = { findCable: (id: string) => findCable(id) ?? byId.get(id) };
  const { moved, analysis, thresholdSwr } = prepareSweep(measured, { referenceOhm, thresholdSwr: t.thresholdSwr, mask: t.mask ?? undefined, move: t.move, cables });
  return {
    format,
    referenceOhm,
    thresholdSwr,
    measured: t.source.kind === 'packed' ? t.source.bytes : packPoints(measured),
    moved: moved ? packPoints(moved) : null,
    summary: analysis.summary,
    verdict: analysis.verdict ?? null,
    firstPoints: analysis.points.slice(0, t.firstPage),
  };
}

function judge(t: JudgeTask): JudgedSweep {
  const points = unpackPoints(Buffer.from(t.packed.buffer, t.packed.byteOffset, t.packed.byteLength));
  const { summary, verdict } = analyseSweep(points, { referenceOhm: t.referenceOhm, thresholdSwr: t.thresholdSwr, mask: t.mask ?? undefined });
  return { summary, verdict: verdict ?? null };
}

/** Runs one task (in a worker thread, or in-process where no worker is wanted). */
export function runPreparationTask(t: PreparationTask): PreparedSweep | JudgedSweep | Uint8Array {
  if (t.task === 'prepare') return prepare(t);
  if (t.task === 'judge') return judge(t);
  return exportChunk(Buffer.from(t.packed.buffer, t.packed.byteOffset, t.packed.byteLength), t.referenceOhm, t.format);
}

export function failureOf(err: unknown): PreparationFailure {
  if (err instanceof SweepFileError) return { type: 'format', line: err.line, reason: err.reason, format: err.format };
  if (err instanceof RfInputError) return { type: 'rf', field: err.field, message: err.message };
  const e = err instanceof Error ? err : new Error(String(err));
  return { type: 'other', message: e.message, stack: e.stack };
}

export function reviveError(f: PreparationFailure): Error {
  if (f.type === 'format') return new SweepFileError(f.line, f.reason, f.format);
  if (f.type === 'rf') return new RfInputError(f.field, f.message);
  const err = new Error(`sweep preparation failed: ${f.message}`);
  if (f.stack) err.stack = f.stack;
  return err;
}
