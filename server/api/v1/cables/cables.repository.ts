import { and, asc, eq, inArray, sql } from 'drizzle-orm';
import type { AttenuationModel, CableType } from '../../../../shared/rf/cables.ts';
import type { Db } from '../../../db/client.ts';
import { accountCables, feedlines } from '../../../db/schema.ts';

type DbOrTx = Pick<Db, 'select' | 'insert' | 'update' | 'delete'>;

/** An account cable in the catalog's shape, plus when it last changed. */
export type AccountCable = CableType & { updatedAt: string };

type Row = typeof accountCables.$inferSelect;

function toCable(row: Row): AccountCable {
  return {
    id: row.cableId,
    designation: row.designation,
    impedanceOhm: row.impedanceOhm,
    velocityFactor: row.velocityFactor,
    attenuation: row.attenuation as AttenuationModel,
    maxVoltageRmsV: row.maxVoltageRmsV,
    source: row.source,
    ...(row.notes ? { notes: row.notes } : {}),
    updatedAt: row.updatedAt.toISOString(),
  };
}

export async function listAccountCables(db: DbOrTx, organisationId: string): Promise<AccountCable[]> {
  const rows = await db.select().from(accountCables).where(eq(accountCables.organisationId, organisationId)).orderBy(asc(accountCables.cableId));
  return rows.map(toCable);
}

/** The organisation's cables among `cableIds` (unknown ids are simply absent). */
export async function findAccountCables(db: DbOrTx, organisationId: string, cableIds: readonly string[]): Promise<AccountCable[]> {
  if (cableIds.length === 0) return [];
  const rows = await db
    .select()
    .from(accountCables)
    .where(and(eq(accountCables.organisationId, organisationId), inArray(accountCables.cableId, [...cableIds])));
  return rows.map(toCable);
}

export interface AccountCableValues {
  designation: string;
  impedanceOhm: number;
  velocityFactor: number;
  attenuation: AttenuationModel;
  maxVoltageRmsV: number | null;
  source: string;
  notes: string;
}

/** A written cable with its row id (the audit trail's target; never part of an answer). */
export interface WrittenCable {
  rowId: string;
  cable: AccountCable;
}

/** Inserts a cable; undefined when the organisation already has that id. */
export async function insertAccountCable(
  db: DbOrTx,
  v: AccountCableValues & { organisationId: string; cableId: string; createdBy: string },
): Promise<WrittenCable | undefined> {
  const rows = await db.insert(accountCables).values(v).onConflictDoNothing().returning();
  return rows[0] ? { rowId: rows[0].id, cable: toCable(rows[0]) } : undefined;
}

export async function updateAccountCable(
  db: DbOrTx,
  q: { organisationId: string; cableId: string },
  set: Partial<AccountCableValues>,
): Promise<WrittenCable | undefined> {
  const rows = await db
    .update(accountCables)
    .set({ ...set, updatedAt: sql`now()` })
    .where(and(eq(accountCables.organisationId, q.organisationId), eq(accountCables.cableId, q.cableId)))
    .returning();
  return rows[0] ? { rowId: rows[0].id, cable: toCable(rows[0]) } : undefined;
}

/** Deletes the cable; its row id (for the audit trail), or undefined when there was none. */
export async function deleteAccountCable(db: DbOrTx, q: { organisationId: string; cableId: string }): Promise<string | undefined> {
  const rows = await db
    .delete(accountCables)
    .where(and(eq(accountCables.organisationId, q.organisationId), eq(accountCables.cableId, q.cableId)))
    .returning({ id: accountCables.id });
  return rows[0]?.id;
}

/** Names of the organisation's feed lines with a section on this cable. */
export async function feedlinesUsingCable(db: DbOrTx, q: { organisationId: string; cableId: string }): Promise<string[]> {
  const rows = await db
    .select({ name: feedlines.name })
    .from(feedlines)
    .where(and(eq(feedlines.organisationId, q.organisationId), sql`${feedlines.sections} @> ${JSON.stringify([{ cableId: q.cableId }])}::jsonb`))
    .orderBy(asc(feedlines.name));
  return rows.map((r) => r.name);
}
