import { and, asc, eq, getTableColumns, isNull, sql, type SQL } from 'drizzle-orm';
import type { Db } from '../../../db/client.ts';
import { apiKeys, keyQuotaDays, users } from '../../../db/schema.ts';
import type { ApiKeyView } from './keys.schemas.ts';

type Tx = Parameters<Parameters<Db['transaction']>[0]>[0];
export type DbOrTx = Db | Tx;

// List and read queries never select the hash.
const { keyHash: _hash, ...publicKeyColumns } = getTableColumns(apiKeys);

function keyView() {
  return {
    ...publicKeyColumns,
    ownerEmail: users.email,
    ownerName: users.displayName,
    ownerDisabled: users.disabled,
    // Units reserved by running processes but not spent yet are not "used"; a process that has gone
    // (row not refreshed for 5 s) lost its reservation, which stays counted (see server/quota/key-leases.ts).
    usedToday: sql<number>`greatest(0, coalesce(${keyQuotaDays.used}, 0) - coalesce((
      select sum(l.units) from quota_leases l
      where l.key_id = ${apiKeys.id} and l.day = ${keyQuotaDays.day} and l.updated_at > now() - interval '5 seconds'), 0))`.mapWith(Number),
  };
}

type KeyRow = Awaited<ReturnType<typeof selectKeys>>[number];

function selectKeys(db: DbOrTx, where: SQL | undefined, now: Date, day: string) {
  return db
    .select(keyView())
    .from(apiKeys)
    .innerJoin(users, eq(users.id, apiKeys.userId))
    .leftJoin(keyQuotaDays, and(eq(keyQuotaDays.keyId, apiKeys.id), eq(keyQuotaDays.day, day)))
    .where(where)
    .orderBy(asc(apiKeys.createdAt), asc(apiKeys.id));
}

export function toApiKeyView(row: KeyRow, now: Date): ApiKeyView {
  const state: ApiKeyView['state'] = row.revokedAt
    ? 'revoked'
    : row.expiresAt && row.expiresAt <= now
      ? 'expired'
      : row.ownerDisabled
        ? 'owner-disabled'
        : 'active';
  return {
    id: row.id,
    name: row.name,
    note: row.note,
    displayStart: row.displayStart,
    owner: { id: row.userId, email: row.ownerEmail, displayName: row.ownerName },
    dailyQuota: row.dailyQuota,
    burstPerMinute: row.burstPerMinute,
    usedToday: row.usedToday,
    state,
    expiresAt: row.expiresAt?.toISOString() ?? null,
    revokedAt: row.revokedAt?.toISOString() ?? null,
    createdAt: row.createdAt.toISOString(),
    createdById: row.createdBy,
    lastUsedAt: row.lastUsedAt?.toISOString() ?? null,
  };
}

/** Keys of one organisation, optionally of one owner. */
export async function listKeys(db: DbOrTx, q: { organisationId: string; userId?: string; now: Date; day: string }): Promise<ApiKeyView[]> {
  const rows = await selectKeys(db, and(eq(apiKeys.organisationId, q.organisationId), q.userId ? eq(apiKeys.userId, q.userId) : undefined), q.now, q.day);
  return rows.map((r) => toApiKeyView(r, q.now));
}

/** One key of the organisation (and of the owner, when given); undefined when there is none. */
export async function findKey(db: DbOrTx, q: { organisationId: string; keyId: string; userId?: string; now: Date; day: string }): Promise<ApiKeyView | undefined> {
  const rows = await selectKeys(
    db,
    and(eq(apiKeys.organisationId, q.organisationId), eq(apiKeys.id, q.keyId), q.userId ? eq(apiKeys.userId, q.userId) : undefined),
    q.now,
    q.day,
  );
  return rows[0] ? toApiKeyView(rows[0], q.now) : undefined;
}

export async function insertKey(
  db: DbOrTx,
  v: { organisationId: string; userId: string; name: string; note: string; keyHash: string; displayStart: string; dailyQuota: number; burstPerMinute: number; expiresAt: Date | null; createdBy: string | null },
): Promise<string> {
  const [row] = await db.insert(apiKeys).values(v).returning({ id: apiKeys.id });
  return row!.id;
}

/** Revokes a live key; undefined when there is no such key or it was already revoked. */
export async function markRevoked(db: DbOrTx, q: { organisationId: string; keyId: string; userId?: string }): Promise<{ id: string } | undefined> {
  const rows = await db
    .update(apiKeys)
    .set({ revokedAt: sql`now()` })
    .where(and(eq(apiKeys.organisationId, q.organisationId), eq(apiKeys.id, q.keyId), q.userId ? eq(apiKeys.userId, q.userId) : undefined, isNull(apiKeys.revokedAt)))
    .returning({ id: apiKeys.id });
  return rows[0];
}

export async function updateKeyFields(
  db: DbOrTx,
  q: { organisationId: string; keyId: string },
  set: Partial<{ name: string; note: string; dailyQuota: number; burstPerMinute: number }>,
): Promise<void> {
  await db.update(apiKeys).set(set).where(and(eq(apiKeys.organisationId, q.organisationId), eq(apiKeys.id, q.keyId)));
}

/** Quota fields before a change, read under a row lock so the audit shows the true "before". */
export async function lockKeyLimits(db: Tx, q: { organisationId: string; keyId: string; userId?: string }) {
  const rows = await db
    .select({ id: apiKeys.id, dailyQuota: apiKeys.dailyQuota, burstPerMinute: apiKeys.burstPerMinute, name: apiKeys.name, note: apiKeys.note })
    .from(apiKeys)
    .where(and(eq(apiKeys.organisationId, q.organisationId), eq(apiKeys.id, q.keyId), q.userId ? eq(apiKeys.userId, q.userId) : undefined))
    .for('update');
  return rows[0];
}
