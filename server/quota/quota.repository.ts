import { and, eq, isNull, sql } from 'drizzle-orm';
import type pg from 'pg';
import { withoutStatementTimeout, type Db } from '../db/client.ts';
import { keyQuotaDays } from '../db/schema.ts';

export interface KeySpend {
  keyId: string;
  organisationId: string;
  userId: string;
  endpoint: string;
  day: string;
  units: number;
  /** The quota the caller believes in; the database's current `daily_quota` is what is applied. */
  quota: number;
}

export type KeySpendResult =
  | { admitted: true; used: number; quota: number; warned80: boolean; warned100: boolean }
  | { admitted: false; used: number; quota: number };

/** Metered requests of one key and UTC day, in arrival order, to be decided by one statement. */
export interface KeySpendGroup {
  keyId: string;
  organisationId: string;
  userId: string;
  day: string;
  requests: { units: number; endpoint: string }[];
}

/**
 * Decides a whole group of quota spends in ONE statement (`gammaline_spend_key`, see drizzle/0007):
 * under the day row's lock each request is granted in arrival order when its units still fit; the
 * total is added to the day and the granted units to usage_daily. The day's total never exceeds the
 * key's current quota, whatever the number of processes; results come back in the order of `group.requests`.
 */
export async function spendKeyUnitsGroup(db: Db, group: KeySpendGroup): Promise<KeySpendResult[]> {
  const units = group.requests.map((request) => request.units);
  const endpoints = group.requests.map((request) => request.endpoint);
  const result = await db.execute<{ granted: boolean[]; used: number; quota: number; warned80: boolean; warned100: boolean }>(sql`
    select granted, used, quota, warned80, warned100
    from gammaline_spend_key(${group.keyId}::uuid, ${group.organisationId}::uuid, ${group.userId}::uuid, ${group.day}::date,
      ${sql.param(units)}::int[], ${sql.param(endpoints)}::text[])`);
  const row = result.rows[0]!;
  const used = Number(row.used);
  const quota = Number(row.quota);
  return row.granted.map((ok): KeySpendResult => (ok ? { admitted: true, used, quota, warned80: row.warned80, warned100: row.warned100 } : { admitted: false, used, quota }));
}

/** One spend on its own (NDJSON blocks): the group statement with a group of one. */
export async function spendKeyUnits(db: Db, spend: KeySpend): Promise<KeySpendResult> {
  const [result] = await spendKeyUnitsGroup(db, {
    keyId: spend.keyId,
    organisationId: spend.organisationId,
    userId: spend.userId,
    day: spend.day,
    requests: [{ units: spend.units, endpoint: spend.endpoint }],
  });
  return result!;
}

/** Records when keys were last used: one statement for many keys, never moving a time backwards. */
export async function recordKeysLastUsed(db: Db, seen: Map<string, Date>): Promise<void> {
  if (seen.size === 0) return;
  const ids = [...seen.keys()];
  const times = ids.map((id) => seen.get(id)!.toISOString());
  await db.execute(sql`
    update api_keys k set last_used_at = greatest(k.last_used_at, v.at)
    from unnest(${sql.param(ids)}::uuid[], ${sql.param(times)}::timestamptz[]) as v(id, at)
    where k.id = v.id`);
}

/** Units a key has spent on a day (0 when it has not been used). */
export async function unitsUsed(db: Db, keyId: string, day: string): Promise<number> {
  const rows = await db
    .select({ used: keyQuotaDays.used })
    .from(keyQuotaDays)
    .where(and(eq(keyQuotaDays.keyId, keyId), eq(keyQuotaDays.day, day)));
  return rows[0]?.used ?? 0;
}

/** Console calls have no daily quota; they are only recorded against the member, key null. */
export async function recordConsoleUsage(db: Db, usage: { organisationId: string; userId: string; endpoint: string; day: string; units: number }): Promise<void> {
  await db.execute(sql`
    insert into usage_daily as u (organisation_id, user_id, key_id, endpoint, day, units, requests)
    values (${usage.organisationId}::uuid, ${usage.userId}::uuid, null, ${usage.endpoint}, ${usage.day}::date, ${usage.units}::int, 1)
    on conflict (user_id, endpoint, day) where key_id is null
    do update set units = u.units + excluded.units, requests = u.requests + 1`);
}

/**
 * Sets the day's 80 % or 100 % flag if it is not set yet; true only for the one caller that set it,
 * so each warning goes out once per key and day even with many processes.
 */
export async function claimQuotaWarning(db: Db, keyId: string, day: string, threshold: 80 | 100): Promise<boolean> {
  const column = threshold === 80 ? keyQuotaDays.warned80At : keyQuotaDays.warned100At;
  const rows = await db
    .update(keyQuotaDays)
    .set(threshold === 80 ? { warned80At: sql`now()` } : { warned100At: sql`now()` })
    .where(and(eq(keyQuotaDays.keyId, keyId), eq(keyQuotaDays.day, day), isNull(column)))
    .returning({ keyId: keyQuotaDays.keyId });
  return rows.length > 0;
}

/** What a process asks of `gammaline_lease_key` (drizzle/0005) for one key and day. */
export interface LeaseAsk {
  instanceId: string;
  keyId: string;
  day: string;
  /** Units and hits the requests waiting right now need beyond what the process holds. */
  needUnits: number;
  needHits: number;
  /** How many more it would like to hold in advance (granted only while plenty is free). */
  extraUnits: number;
  extraHits: number;
  /** Units the process holds unspent before this lease (recorded in its lease row). */
  unspent: number;
  /** The per-minute window row (`burst:key:<id>`); omitted: no burst counting. */
  burst?: { row: string; windowMs: number };
}

/** What the database reserved, and the key's state after the reservation. */
export interface LeaseGrant {
  units: number;
  hits: number;
  /** The day's spent and reserved units, this grant included. */
  used: number;
  quota: number;
  warned80: boolean;
  warned100: boolean;
  /**
   * The per-minute window after the grant (hits include every process's reservations): its end as the
   * database wrote it, and how long it still had to run when the database granted (so that a process
   * places the end on its own clock).
   */
  burst?: { hits: number; limit: number; resetAt: Date; resetInMs: number };
  /** Other live processes holding unspent units of this key and day. */
  holders: number;
}

/**
 * Reserves quota units and per-minute hits for one key and day in ONE statement; the day's spent and
 * reserved total never exceeds the key's current quota whatever the number of processes.
 */
export async function leaseKeyUnits(db: Db, ask: LeaseAsk): Promise<LeaseGrant> {
  const result = await db.execute<{
    granted_units: number;
    granted_hits: number;
    used: number;
    quota: number;
    warned80: boolean;
    warned100: boolean;
    hits: number | null;
    burst_limit: number;
    reset_at: Date | string | null;
    reset_in_ms: number | null;
    holders: number;
  }>(sql`
    select granted_units, granted_hits, used, quota, warned80, warned100, hits, burst_limit, reset_at,
      extract(epoch from reset_at - now()) * 1000 as reset_in_ms, holders
    from gammaline_lease_key(${ask.instanceId}::uuid, ${ask.keyId}::uuid, ${ask.day}::date, ${ask.needUnits}::int, ${ask.extraUnits}::int,
      ${ask.needHits}::int, ${ask.extraHits}::int, ${ask.unspent}::int, ${ask.burst?.row ?? null}::text, ${ask.burst?.windowMs ?? 0}::int)`);
  const row = result.rows[0]!;
  return {
    units: Number(row.granted_units),
    hits: Number(row.granted_hits),
    used: Number(row.used),
    quota: Number(row.quota),
    warned80: row.warned80,
    warned100: row.warned100,
    burst:
      row.hits === null || row.reset_at === null
        ? undefined
        : { hits: Number(row.hits), limit: Number(row.burst_limit), resetAt: new Date(row.reset_at), resetInMs: Number(row.reset_in_ms) },
    holders: Number(row.holders),
  };
}

/** Other live processes holding unspent units of a key and day (the holders a reclaim asks). */
export async function countOtherHolders(db: Db, holder: { instanceId: string; keyId: string; day: string }): Promise<number> {
  const result = await db.execute<{ n: number }>(sql`
    select count(*)::int as n from quota_leases l
    where l.key_id = ${holder.keyId}::uuid and l.day = ${holder.day}::date and l.instance_id <> ${holder.instanceId}::uuid
      and l.units > 0 and l.updated_at > now() - interval '5 seconds'`);
  return Number(result.rows[0]!.n);
}

/**
 * Bookkeeping of quota leases that nobody needs any more: lease rows of past days (a process that
 * died keeps its row) and the flush numbers of processes not heard from for two days.
 */
export async function pruneQuotaBookkeeping(pool: pg.Pool): Promise<void> {
  // Without the serving pool's statement timeout: a large backlog must not be cancelled and retried for ever.
  await withoutStatementTimeout(pool, async (client) => {
    await client.query('delete from quota_leases where day < current_date - 1');
    await client.query("delete from usage_flushes where updated_at < now() - interval '2 days'");
  });
}

/** Gives unspent reserved units (and hits of a still-current window) back and drops the lease row (once: see drizzle/0005). */
export async function returnKeyLease(
  db: Db,
  lease: { instanceId: string; keyId: string; day: string; units: number; burstRow?: string; hits: number; resetAt?: Date },
): Promise<void> {
  await db.execute(sql`
    select gammaline_return_lease(${lease.instanceId}::uuid, ${lease.keyId}::uuid, ${lease.day}::date, ${lease.units}::int,
      ${lease.burstRow ?? null}::text, ${lease.hits}::int, ${lease.resetAt?.toISOString() ?? null}::timestamptz)`);
}

/** Usage of one key, endpoint and day, added up in memory since the last flush. */
export interface BufferedUsage {
  organisationId: string;
  userId: string;
  keyId: string;
  endpoint: string;
  day: string;
  units: number;
  requests: number;
}

/**
 * Writes buffered usage and refreshes the process's lease rows in one statement. `seq` numbers the
 * process's flushes; a flush sent again after a lost answer is skipped (false), never counted twice.
 */
export async function flushKeyUsage(
  db: Db,
  flush: { instanceId: string; seq: number; usage: BufferedUsage[]; leases: { keyId: string; day: string; units: number }[] },
): Promise<boolean> {
  const usage = flush.usage;
  const leases = flush.leases;
  const result = await db.execute<{ applied: boolean }>(sql`
    select gammaline_flush_usage(${flush.instanceId}::uuid, ${flush.seq}::bigint,
      ${sql.param(usage.map((row) => row.organisationId))}::uuid[], ${sql.param(usage.map((row) => row.userId))}::uuid[], ${sql.param(usage.map((row) => row.keyId))}::uuid[],
      ${sql.param(usage.map((row) => row.endpoint))}::text[], ${sql.param(usage.map((row) => row.day))}::date[],
      ${sql.param(usage.map((row) => row.units))}::int[], ${sql.param(usage.map((row) => row.requests))}::int[],
      ${sql.param(leases.map((lease) => lease.keyId))}::uuid[], ${sql.param(leases.map((lease) => lease.day))}::date[], ${sql.param(leases.map((lease) => lease.units))}::int[]
    ) as applied`);
  return result.rows[0]!.applied;
}
