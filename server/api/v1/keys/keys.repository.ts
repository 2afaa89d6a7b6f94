import { and, asc, eq, getTableColumns, isNull, sql, type SQL } from 'drizzle-orm';
import { KEY_CHANGES_CHANNEL } from '../../../auth/key-changes.ts';
import type { Db, DbOrTx, Tx } from '../../../db/client.ts';
import { apiKeys, keyQuotaDays, organisations, users } from '../../../db/schema.ts';
import type { ApiKeyView } from './keys.schemas.ts';

// Until every repository imports it from the database client (the sweeps, feed lines and cables ones still import it from here).
export type { DbOrTx };

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

function selectKeys(db: DbOrTx, where: SQL | undefined, day: string) {
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
    allowedOrigins: row.allowedOrigins,
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
export async function listKeys(db: DbOrTx, scope: { organisationId: string; userId?: string; now: Date; day: string }): Promise<ApiKeyView[]> {
  const rows = await selectKeys(db, and(eq(apiKeys.organisationId, scope.organisationId), scope.userId ? eq(apiKeys.userId, scope.userId) : undefined), scope.day);
  return rows.map((row) => toApiKeyView(row, scope.now));
}

/** One key of the organisation (and of the owner, when given); undefined when there is none. */
export async function findKey(db: DbOrTx, scope: { organisationId: string; keyId: string; userId?: string; now: Date; day: string }): Promise<ApiKeyView | undefined> {
  const rows = await selectKeys(
    db,
    and(eq(apiKeys.organisationId, scope.organisationId), eq(apiKeys.id, scope.keyId), scope.userId ? eq(apiKeys.userId, scope.userId) : undefined),
    scope.day,
  );
  return rows[0] ? toApiKeyView(rows[0], scope.now) : undefined;
}

/** The member a new key is for, with the organisation's default limits; undefined when not a member of it. */
export async function findKeyOwner(db: DbOrTx, scope: { organisationId: string; userId: string }) {
  const rows = await db
    .select({ id: users.id, disabled: users.disabled, defaultDailyQuota: organisations.defaultDailyQuota, defaultBurstPerMinute: organisations.defaultBurstPerMinute })
    .from(users)
    .innerJoin(organisations, eq(organisations.id, users.organisationId))
    .where(and(eq(users.id, scope.userId), eq(users.organisationId, scope.organisationId)));
  return rows[0];
}

export async function insertKey(
  db: DbOrTx,
  values: {
    organisationId: string;
    userId: string;
    name: string;
    note: string;
    keyHash: string;
    displayStart: string;
    dailyQuota: number;
    burstPerMinute: number;
    allowedOrigins: string[];
    expiresAt: Date | null;
    createdBy: string | null;
  },
): Promise<string> {
  const [row] = await db.insert(apiKeys).values(values).returning({ id: apiKeys.id });
  const id = row!.id;
  // The triggers announce changes, not new keys; a new browser origin is announced here so that every
  // process answers its preflights at once (server/auth/origins.ts).
  if (values.allowedOrigins.length > 0) await db.execute(sql`select pg_notify(${KEY_CHANGES_CHANNEL}, ${`key:${id}`})`);
  return id;
}

/** Revokes a live key; undefined when there is no such key or it was already revoked. */
export async function markRevoked(db: DbOrTx, scope: { organisationId: string; keyId: string; userId?: string }): Promise<{ id: string } | undefined> {
  const rows = await db
    .update(apiKeys)
    .set({ revokedAt: sql`now()` })
    .where(and(eq(apiKeys.organisationId, scope.organisationId), eq(apiKeys.id, scope.keyId), scope.userId ? eq(apiKeys.userId, scope.userId) : undefined, isNull(apiKeys.revokedAt)))
    .returning({ id: apiKeys.id });
  return rows[0];
}

export async function updateKeyFields(
  db: DbOrTx,
  scope: { organisationId: string; keyId: string },
  changes: Partial<{ name: string; note: string; dailyQuota: number; burstPerMinute: number; allowedOrigins: string[] }>,
): Promise<void> {
  await db.update(apiKeys).set(changes).where(and(eq(apiKeys.organisationId, scope.organisationId), eq(apiKeys.id, scope.keyId)));
}

/** Quota fields before a change, read under a row lock so the audit shows the true "before". */
export async function lockKeyLimits(db: Tx, scope: { organisationId: string; keyId: string; userId?: string }) {
  const rows = await db
    .select({
      id: apiKeys.id,
      dailyQuota: apiKeys.dailyQuota,
      burstPerMinute: apiKeys.burstPerMinute,
      name: apiKeys.name,
      note: apiKeys.note,
      allowedOrigins: apiKeys.allowedOrigins,
    })
    .from(apiKeys)
    .where(and(eq(apiKeys.organisationId, scope.organisationId), eq(apiKeys.id, scope.keyId), scope.userId ? eq(apiKeys.userId, scope.userId) : undefined))
    .for('update');
  return rows[0];
}
