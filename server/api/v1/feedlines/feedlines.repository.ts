import { and, asc, eq, sql } from 'drizzle-orm';
import type { FeedlineSection } from '../../../../shared/schemas/feedlines.ts';
import type { Db } from '../../../db/client.ts';
import { feedlines } from '../../../db/schema.ts';

type DbOrTx = Pick<Db, 'select' | 'insert' | 'update' | 'delete'>;

export interface FeedlineRecord {
  id: string;
  name: string;
  notes: string;
  sections: FeedlineSection[];
  createdAt: Date;
  updatedAt: Date;
}

const columns = {
  id: feedlines.id,
  name: feedlines.name,
  notes: feedlines.notes,
  sections: feedlines.sections,
  createdAt: feedlines.createdAt,
  updatedAt: feedlines.updatedAt,
};

export async function listFeedlines(db: DbOrTx, organisationId: string): Promise<FeedlineRecord[]> {
  const rows = await db.select(columns).from(feedlines).where(eq(feedlines.organisationId, organisationId)).orderBy(asc(feedlines.createdAt), asc(feedlines.name));
  return rows as FeedlineRecord[];
}

export async function findFeedline(db: DbOrTx, q: { organisationId: string; id: string }): Promise<FeedlineRecord | undefined> {
  const rows = await db.select(columns).from(feedlines).where(and(eq(feedlines.organisationId, q.organisationId), eq(feedlines.id, q.id)));
  return rows[0] as FeedlineRecord | undefined;
}

export async function findFeedlineByName(db: DbOrTx, q: { organisationId: string; name: string }): Promise<FeedlineRecord | undefined> {
  const rows = await db.select(columns).from(feedlines).where(and(eq(feedlines.organisationId, q.organisationId), eq(feedlines.name, q.name)));
  return rows[0] as FeedlineRecord | undefined;
}

export async function insertFeedline(
  db: DbOrTx,
  v: { organisationId: string; createdBy: string | null; name: string; notes: string; sections: FeedlineSection[] },
): Promise<FeedlineRecord> {
  const rows = await db.insert(feedlines).values(v).returning(columns);
  return rows[0] as FeedlineRecord;
}

export async function updateFeedline(
  db: DbOrTx,
  q: { organisationId: string; id: string },
  set: Partial<{ name: string; notes: string; sections: FeedlineSection[] }>,
): Promise<FeedlineRecord | undefined> {
  const rows = await db
    .update(feedlines)
    .set({ ...set, updatedAt: sql`now()` })
    .where(and(eq(feedlines.organisationId, q.organisationId), eq(feedlines.id, q.id)))
    .returning(columns);
  return rows[0] as FeedlineRecord | undefined;
}

export async function deleteFeedline(db: DbOrTx, q: { organisationId: string; id: string }): Promise<boolean> {
  const rows = await db
    .delete(feedlines)
    .where(and(eq(feedlines.organisationId, q.organisationId), eq(feedlines.id, q.id)))
    .returning({ id: feedlines.id });
  return rows.length > 0;
}
