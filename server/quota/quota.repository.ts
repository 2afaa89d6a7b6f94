import { and, eq, isNull, sql } from 'drizzle-orm';
import type { Db } from '../db/client.ts';
import { keyQuotaDays } from '../db/schema.ts';

export interface KeySpend {
  keyId: string;
  organisationId: string;
  userId: string;
  endpoint: string;
  day: string;
  units: number;
  quota: number;
}

export type KeySpendResult =
  | { admitted: true; used: number; warned80: boolean; warned100: boolean }
  | { admitted: false; used: number };

/**
 * Spends `units` of a key's daily quota and records the usage, in ONE statement: the conditional
 * upsert only writes when `used + units <= quota`, and the usage row is written from its result.
 * N parallel calls against M remaining units therefore admit exactly M, across processes.
 */
export async function spendKeyUnits(db: Db, s: KeySpend): Promise<KeySpendResult> {
  const result = await db.execute<{ used: number; warned80: boolean; warned100: boolean }>(sql`
    with spent as (
      insert into key_quota_days as q (key_id, day, used)
      select ${s.keyId}::uuid, ${s.day}::date, ${s.units}::int
      where ${s.units}::int <= ${s.quota}::int
      on conflict (key_id, day) do update set used = q.used + excluded.used
      where q.used + excluded.used <= ${s.quota}::int
      returning q.used, q.warned_80_at is not null as warned80, q.warned_100_at is not null as warned100
    ), recorded as (
      insert into usage_daily as u (organisation_id, user_id, key_id, endpoint, day, units, requests)
      select ${s.organisationId}::uuid, ${s.userId}::uuid, ${s.keyId}::uuid, ${s.endpoint}, ${s.day}::date, ${s.units}::int, 1
      from spent
      on conflict (key_id, endpoint, day) where key_id is not null
      do update set units = u.units + excluded.units, requests = u.requests + 1
    )
    select used, warned80, warned100 from spent`);
  const row = result.rows[0];
  if (row) return { admitted: true, used: Number(row.used), warned80: row.warned80, warned100: row.warned100 };
  return { admitted: false, used: await unitsUsed(db, s.keyId, s.day) };
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
export async function recordConsoleUsage(db: Db, r: { organisationId: string; userId: string; endpoint: string; day: string; units: number }): Promise<void> {
  await db.execute(sql`
    insert into usage_daily as u (organisation_id, user_id, key_id, endpoint, day, units, requests)
    values (${r.organisationId}::uuid, ${r.userId}::uuid, null, ${r.endpoint}, ${r.day}::date, ${r.units}::int, 1)
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
