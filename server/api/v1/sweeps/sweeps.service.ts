import type { z } from 'zod';
import type { CableLookup } from '../../../../shared/calculations/cable-lookup.ts';
import { faultDistanceOf, type FaultOptions } from '../../../../shared/calculations/fault-distance.ts';
import { RfInputError } from '../../../../shared/rf/errors.ts';
import type { LineSpec } from '../../../../shared/schemas/calculations.ts';
import type { FeedlineSection } from '../../../../shared/schemas/feedlines.ts';
import { DEFAULT_SWEEP_POINTS_PAGE, type SweepSchema } from '../../../../shared/schemas/sweeps.ts';
import { analyseSweep, type SweepMask } from '../../../../shared/sweep/analyse.ts';
import { reflectionSamples } from '../../../../shared/sweep/fault-distance.ts';
import type { FileFormat } from '../../../../shared/sweep/file-format.ts';
import type { SweepDirection } from '../../../../shared/sweep/move.ts';
import type { SweepPointInput } from '../../../../shared/sweep/points.ts';
import { prepareSweep as prepareSweepThrough, type SweepMove } from '../../../../shared/sweep/prepare.ts';
import type { Db } from '../../../db/client.ts';
import { ApiError } from '../../../http/problem.ts';
import { accountCableIdsIn, cableIdsIn, cableLookupFor } from '../cables/cable-lookup.ts';
import { findAccountCables } from '../cables/cables.repository.ts';
import { findFeedline } from '../feedlines/feedlines.repository.ts';
import {
  findSweep,
  findSweepForJudging,
  findSweepSlice,
  insertSweep,
  readSweepPoints,
  updateSweepAnalysis,
  type SweepFormat,
  type SweepOutline,
} from './sweeps.repository.ts';
import { analysedPointsOf } from './sweeps.export.ts';
import { SweepFileError } from './sweeps.preparation.ts';
import { judgeInWorker, prepareInWorker } from './sweeps.preparer.ts';
import { packPoints, unpackPoints } from './sweeps.points.ts';

/** The sweep of an upload: points already read (JSON, the demo seed), or a file read in a worker thread. */
export type SweepSource =
  | { measured: SweepPointInput[]; sourceFormat: SweepFormat; fileName: string | null; referenceOhm: number }
  | { file: Uint8Array; fileName: string | null; format?: FileFormat | undefined; referenceOhm?: number | undefined };

/** A sweep to store: its source, the options of the upload, and who stores it. */
export type SweepToStore = SweepUpload & { organisationId: string; createdBy: string | null };

/** An upload: its source and options. */
export type SweepUpload = SweepSource & {
  /** Defaults to the file name without its extension, else "Sweep". */
  name?: string | undefined;
  thresholdSwr?: number | undefined;
  mask?: SweepMask | null | undefined;
  /** A saved feed line of the organisation to move the sweep through (with `direction`)… */
  feedlineId?: string | undefined;
  /** …or a line given with the upload: one description or sections. */
  line?: LineSpec | FeedlineSection[] | undefined;
  direction?: SweepDirection | undefined;
};

/** The line the sweep is moved through, if any, and the saved feed line it came from. */
async function moveOf(db: Db, sweep: SweepToStore): Promise<{ move?: SweepMove; feedline: { id: string; name: string } | null }> {
  if (sweep.feedlineId !== undefined) {
    const feedline = await findFeedline(db, { organisationId: sweep.organisationId, id: sweep.feedlineId });
    if (!feedline) {
      throw new ApiError('unprocessable', 'feedlineId: no saved feed line with that id in your organisation; GET /api/v1/feedlines lists them.', {
        errors: [{ field: 'feedlineId', message: 'no saved feed line with that id in your organisation' }],
      });
    }
    return { move: { sections: feedline.sections, direction: sweep.direction!, field: 'feedlineId', single: false }, feedline: { id: feedline.id, name: feedline.name } };
  }
  if (sweep.line !== undefined) {
    const single = !Array.isArray(sweep.line);
    return { move: { sections: (single ? [sweep.line] : sweep.line) as FeedlineSection[], direction: sweep.direction!, field: 'line', single }, feedline: null };
  }
  return { feedline: null };
}

/** A file that cannot be read: a 400 problem naming the line and what is wrong there. */
function unreadableFile(err: SweepFileError): ApiError {
  const what = err.format === 'touchstone' ? 'Touchstone' : 'CSV';
  const message = `line ${err.line}: ${err.reason}`;
  return new ApiError('validation', `The file could not be read as ${what}: ${message}`, { errors: [{ field: 'file', message }], cause: err });
}

/**
 * Reads (for a file), moves through its line (if any) and analyses the sweep in a worker thread,
 * then stores both point sets with the analysis; answers the stored sweep as GET
 * /api/v1/sweeps/{id} shows it: the summary and the first page of points.
 */
export async function storeSweep(db: Db, sweep: SweepToStore): Promise<z.input<typeof SweepSchema>> {
  const { move, feedline } = await moveOf(db, sweep);
  const accountCables = move ? await findAccountCables(db, sweep.organisationId, accountCableIdsIn(move.sections)) : [];
  const mask = sweep.mask ?? null;
  const fileName = sweep.fileName;
  let prepared;
  try {
    prepared = await prepareInWorker({
      source: 'file' in sweep ? { kind: 'file', bytes: sweep.file, fileName: fileName ?? undefined, format: sweep.format } : { kind: 'packed', bytes: packPoints(sweep.measured) },
      referenceOhm: sweep.referenceOhm,
      thresholdSwr: sweep.thresholdSwr,
      mask,
      move,
      accountCables,
      firstPage: DEFAULT_SWEEP_POINTS_PAGE,
    });
  } catch (err) {
    throw err instanceof SweepFileError ? unreadableFile(err) : err;
  }
  const { referenceOhm, thresholdSwr, summary } = prepared;
  const sourceFormat = 'file' in sweep ? (prepared.format as SweepFormat) : sweep.sourceFormat;
  const verdict = prepared.verdict;
  const name = sweep.name ?? (fileName ? fileName.replace(/\.[A-Za-z0-9]+$/, '') || fileName : 'Sweep');
  const stored = await insertSweep(db, {
    organisationId: sweep.organisationId,
    createdBy: sweep.createdBy,
    name,
    sourceFormat,
    fileName,
    referenceOhm,
    thresholdSwr,
    direction: move?.direction ?? null,
    line: move?.sections ?? null,
    feedlineId: feedline?.id ?? null,
    mask,
    pointCount: summary.pointCount,
    startHz: summary.startHz,
    stopHz: summary.stopHz,
    measuredPoints: asBuffer(prepared.measured),
    movedPoints: prepared.moved ? asBuffer(prepared.moved) : null,
    summary,
    verdict,
  });
  return {
    id: stored.id,
    name,
    sourceFormat,
    fileName,
    referenceOhm,
    thresholdSwr,
    direction: move?.direction ?? null,
    feedline,
    mask,
    summary,
    verdict,
    createdAt: stored.createdAt.toISOString(),
    line: move?.sections ?? null,
    points: prepared.firstPoints,
    nextCursor: summary.pointCount > DEFAULT_SWEEP_POINTS_PAGE ? cursorAt(DEFAULT_SWEEP_POINTS_PAGE) : null,
  };
}

function asBuffer(bytes: Uint8Array): Buffer {
  return Buffer.isBuffer(bytes) ? bytes : Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
}


/** Cursors are opaque to clients: the index of the page's first point. Stored points never change, so a cursor stays valid. */
export function cursorAt(index: number): string {
  return Buffer.from(`p${index}`).toString('base64url');
}

/** The point index a cursor stands for; a 400 problem for one this server did not write. */
export function indexOfCursor(cursor: string | undefined): number {
  if (cursor === undefined) return 0;
  const m = /^p(\d{1,9})$/.exec(Buffer.from(cursor, 'base64url').toString('latin1'));
  if (!m) {
    throw new ApiError('validation', 'cursor is not one this server gave out; pass nextCursor from the previous page unchanged, or leave it out for the first page.', {
      errors: [{ field: 'cursor', message: 'not a cursor from a previous page' }],
    });
  }
  return Number(m[1]);
}

/** A sweep's outline as the API shows it. */
export function outlineView(o: SweepOutline) {
  const { pointCount: _n, ...header } = o;
  return { ...header, createdAt: header.createdAt.toISOString() };
}

/**
 * A page of a stored sweep's analysed points from `start`, with the outline; undefined when the
 * organisation has no such sweep. Only the page's points are read from the database.
 */
export async function sweepPage(db: Db, q: { organisationId: string; id: string }, page: { start: number; limit: number }) {
  const found = await findSweepSlice(db, q, { start: page.start, count: page.limit });
  if (!found) return undefined;
  const { outline, packed } = found;
  const points = analysedPointsOf(packed, outline.referenceOhm);
  const next = page.start + points.length;
  return { outline, points, nextCursor: points.length > 0 && next < outline.pointCount ? cursorAt(next) : null };
}

/** The outline alone (`?fields=summary`). */
export async function sweepOutline(db: Db, q: { organisationId: string; id: string }): Promise<SweepOutline | undefined> {
  return (await findSweepSlice(db, q, { start: 0, count: 0 }))?.outline;
}

/**
 * A stored sweep's analysed points, packed, in slices of `sliceSize`, read from the database one
 * slice at a time: an export of any size holds one slice in memory. Fails when the sweep is deleted meanwhile.
 */
export async function* packedPointSlices(db: Db, q: { organisationId: string; id: string }, outline: SweepOutline, sliceSize: number): AsyncGenerator<Buffer> {
  for (let start = 0; start < outline.pointCount; start += sliceSize) {
    const packed = await readSweepPoints(db, q, { start, count: sliceSize });
    if (packed === undefined) throw new Error('the sweep was deleted during its export');
    yield packed;
  }
}

/**
 * Judges a stored sweep by another threshold and/or mask (`null` removes it) in a worker thread; the
 * points never change. Undefined when the organisation has no such sweep.
 */
export async function rejudgeSweep(
  db: Db,
  q: { organisationId: string; id: string },
  change: { thresholdSwr?: number | undefined; mask?: SweepMask | null | undefined },
): Promise<boolean> {
  const stored = await findSweepForJudging(db, q);
  if (!stored) return false;
  const thresholdSwr = change.thresholdSwr ?? stored.thresholdSwr;
  const mask = change.mask === undefined ? stored.mask : change.mask;
  const { summary, verdict } = await judgeInWorker({ packed: stored.packed, referenceOhm: stored.referenceOhm, thresholdSwr, mask });
  return updateSweepAnalysis(db, q, { thresholdSwr, mask, summary, verdict });
}

/** Distance to fault from a stored sweep's measured points; undefined when the organisation has no such sweep. */
export async function storedSweepFaultDistance(db: Db, q: { organisationId: string; id: string }, options: FaultOptions) {
  const record = await findSweep(db, q);
  if (!record) return undefined;
  const cables: CableLookup = await cableLookupFor(db, q.organisationId, cableIdsIn(options.line));
  try {
    const samples = reflectionSamples(unpackPoints(record.measuredPoints), record.referenceOhm);
    return faultDistanceOf(samples, options, cables);
  } catch (err) {
    // The points are not in this request: a problem with them is addressed to the sweep.
    if (err instanceof RfInputError && err.field.startsWith('points')) throw new RfInputError('id', `in the stored sweep${err.field === 'points' ? '' : `, ${err.field.replace(/^points\.(\d+).*/, 'point $1, counting from 0')}`}: ${err.message}`);
    throw err;
  }
}

/**
 * Transitional, for server/db/seed.ts until it calls storeSweep: the shared prepareSweep under its
 * old option name. Delete with the seed's move.
 */
export function prepareSweep(measured: SweepPointInput[], options: Omit<Parameters<typeof prepareSweepThrough>[1], 'cables'> & { env: CableLookup }) {
  const { env, ...rest } = options;
  return prepareSweepThrough(measured, { ...rest, cables: env });
}
