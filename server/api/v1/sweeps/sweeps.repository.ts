import { and, desc, eq, sql } from 'drizzle-orm';
import type { FeedlineSection } from '../../../../shared/schemas/feedlines.ts';
import type { SweepMask, SweepSummary, SweepVerdict } from '../../../../shared/sweep/analyse.ts';
import type { SweepDirection } from '../../../../shared/sweep/move.ts';
import type { Db } from '../../../db/client.ts';
import { feedlines, sweeps } from '../../../db/schema.ts';

type DbOrTx = Pick<Db, 'select' | 'insert' | 'update' | 'delete'>;

export type SweepFormat = 'touchstone' | 'csv' | 'json';

/** A stored sweep without its points. */
export interface SweepHeader {
  id: string;
  name: string;
  sourceFormat: SweepFormat;
  fileName: string | null;
  referenceOhm: number;
  thresholdSwr: number;
  direction: SweepDirection | null;
  feedline: { id: string; name: string } | null;
  mask: SweepMask | null;
  summary: SweepSummary;
  verdict: SweepVerdict | null;
  createdAt: Date;
}

export interface SweepRecord extends SweepHeader {
  line: FeedlineSection[] | null;
  measuredPoints: Buffer;
  movedPoints: Buffer | null;
}

// The points columns stay out of lists: they are large, and PostgreSQL keeps them out of line (TOAST).
const headerColumns = {
  id: sweeps.id,
  name: sweeps.name,
  sourceFormat: sweeps.sourceFormat,
  fileName: sweeps.fileName,
  referenceOhm: sweeps.referenceOhm,
  thresholdSwr: sweeps.thresholdSwr,
  direction: sweeps.direction,
  feedlineId: feedlines.id,
  feedlineName: feedlines.name,
  mask: sweeps.mask,
  summary: sweeps.summary,
  verdict: sweeps.verdict,
  createdAt: sweeps.createdAt,
};

type HeaderRow = { [K in keyof typeof headerColumns]: unknown };

function toHeader(row: HeaderRow): SweepHeader {
  const { feedlineId, feedlineName, ...rest } = row;
  return { ...(rest as Omit<SweepHeader, 'feedline'>), feedline: feedlineId ? { id: feedlineId as string, name: feedlineName as string } : null };
}

export async function listSweeps(db: DbOrTx, organisationId: string): Promise<SweepHeader[]> {
  const rows = await db
    .select(headerColumns)
    .from(sweeps)
    .leftJoin(feedlines, and(eq(feedlines.id, sweeps.feedlineId), eq(feedlines.organisationId, sweeps.organisationId)))
    .where(eq(sweeps.organisationId, organisationId))
    .orderBy(desc(sweeps.createdAt), desc(sweeps.id));
  return rows.map(toHeader);
}

export async function findSweep(db: DbOrTx, q: { organisationId: string; id: string }): Promise<SweepRecord | undefined> {
  const rows = await db
    .select({ ...headerColumns, line: sweeps.line, measuredPoints: sweeps.measuredPoints, movedPoints: sweeps.movedPoints })
    .from(sweeps)
    .leftJoin(feedlines, and(eq(feedlines.id, sweeps.feedlineId), eq(feedlines.organisationId, sweeps.organisationId)))
    .where(and(eq(sweeps.organisationId, q.organisationId), eq(sweeps.id, q.id)));
  const row = rows[0];
  if (!row) return undefined;
  const { line, measuredPoints, movedPoints, ...header } = row;
  return { ...toHeader(header), line: line as FeedlineSection[] | null, measuredPoints, movedPoints };
}

/** A stored sweep without its points: the header, the line it was moved through and how many points it holds. */
export interface SweepOutline extends SweepHeader {
  line: FeedlineSection[] | null;
  pointCount: number;
}

/** Bytes of one packed point (sweeps.points.ts). */
const BYTES_PER_POINT = 24;

/** The analysed point set: the moved points when the sweep was moved, else the measured ones. */
const analysedPoints = sql`coalesce(${sweeps.movedPoints}, ${sweeps.measuredPoints})`;

/**
 * The sweep's outline and, with `count` > 0, the packed analysed points `start` to `start + count`:
 * PostgreSQL cuts the slice from the stored value, so a page never carries the whole sweep.
 */
export async function findSweepSlice(
  db: DbOrTx,
  q: { organisationId: string; id: string },
  slice: { start: number; count: number },
): Promise<{ outline: SweepOutline; packed: Buffer } | undefined> {
  const from = slice.start * BYTES_PER_POINT + 1;
  const length = Math.max(0, slice.count) * BYTES_PER_POINT;
  const rows = await db
    .select({ ...headerColumns, line: sweeps.line, pointCount: sweeps.pointCount, packed: sql<Buffer>`substring(${analysedPoints} from ${from}::int for ${length}::int)` })
    .from(sweeps)
    .leftJoin(feedlines, and(eq(feedlines.id, sweeps.feedlineId), eq(feedlines.organisationId, sweeps.organisationId)))
    .where(and(eq(sweeps.organisationId, q.organisationId), eq(sweeps.id, q.id)));
  const row = rows[0];
  if (!row) return undefined;
  const { line, pointCount, packed, ...header } = row;
  return { outline: { ...toHeader(header), line: line as FeedlineSection[] | null, pointCount }, packed: packed as Buffer };
}

/** Packed analysed points `start` to `start + count` of a sweep; undefined when it is gone. */
export async function readSweepPoints(db: DbOrTx, q: { organisationId: string; id: string }, slice: { start: number; count: number }): Promise<Buffer | undefined> {
  const rows = await db
    .select({ packed: sql<Buffer>`substring(${analysedPoints} from ${slice.start * BYTES_PER_POINT + 1}::int for ${slice.count * BYTES_PER_POINT}::int)` })
    .from(sweeps)
    .where(and(eq(sweeps.organisationId, q.organisationId), eq(sweeps.id, q.id)));
  return rows[0]?.packed as Buffer | undefined;
}

/** The stored judging figures and the analysed points, packed, for re-judging. */
export async function findSweepForJudging(
  db: DbOrTx,
  q: { organisationId: string; id: string },
): Promise<{ referenceOhm: number; thresholdSwr: number; mask: SweepMask | null; packed: Buffer } | undefined> {
  const rows = await db
    .select({ referenceOhm: sweeps.referenceOhm, thresholdSwr: sweeps.thresholdSwr, mask: sweeps.mask, packed: sql<Buffer>`${analysedPoints}` })
    .from(sweeps)
    .where(and(eq(sweeps.organisationId, q.organisationId), eq(sweeps.id, q.id)));
  const row = rows[0];
  return row ? { referenceOhm: row.referenceOhm, thresholdSwr: row.thresholdSwr, mask: row.mask as SweepMask | null, packed: row.packed as Buffer } : undefined;
}

export async function sweepIdByName(db: DbOrTx, q: { organisationId: string; name: string }): Promise<string | undefined> {
  const rows = await db.select({ id: sweeps.id }).from(sweeps).where(and(eq(sweeps.organisationId, q.organisationId), eq(sweeps.name, q.name)));
  return rows[0]?.id;
}

export interface NewSweep {
  organisationId: string;
  createdBy: string | null;
  name: string;
  sourceFormat: SweepFormat;
  fileName: string | null;
  referenceOhm: number;
  thresholdSwr: number;
  direction: SweepDirection | null;
  line: FeedlineSection[] | null;
  feedlineId: string | null;
  mask: SweepMask | null;
  pointCount: number;
  startHz: number;
  stopHz: number;
  measuredPoints: Buffer;
  movedPoints: Buffer | null;
  summary: SweepSummary;
  verdict: SweepVerdict | null;
}

export async function insertSweep(db: DbOrTx, v: NewSweep): Promise<{ id: string; createdAt: Date }> {
  const rows = await db.insert(sweeps).values(v).returning({ id: sweeps.id, createdAt: sweeps.createdAt });
  return rows[0]!;
}

/** New judging figures and the analysis made with them; false when the sweep is not the organisation's. */
export async function updateSweepAnalysis(
  db: DbOrTx,
  q: { organisationId: string; id: string },
  v: { thresholdSwr: number; mask: SweepMask | null; summary: SweepSummary; verdict: SweepVerdict | null },
): Promise<boolean> {
  const rows = await db
    .update(sweeps)
    .set(v)
    .where(and(eq(sweeps.organisationId, q.organisationId), eq(sweeps.id, q.id)))
    .returning({ id: sweeps.id });
  return rows.length > 0;
}

export async function deleteSweep(db: DbOrTx, q: { organisationId: string; id: string }): Promise<boolean> {
  const rows = await db
    .delete(sweeps)
    .where(and(eq(sweeps.organisationId, q.organisationId), eq(sweeps.id, q.id)))
    .returning({ id: sweeps.id });
  return rows.length > 0;
}
