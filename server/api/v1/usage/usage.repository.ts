import { sql } from 'drizzle-orm';
import type { Db } from '../../../db/client.ts';

/** Which usage rows count: one organisation, a range of UTC days, optionally one member and one key. */
export interface UsageFilter {
  organisationId: string;
  from: string;
  to: string;
  userId?: string;
  keyId?: string;
}

function usageWhere(filter: UsageFilter) {
  const inRange = sql`u.organisation_id = ${filter.organisationId}::uuid and u.day between ${filter.from}::date and ${filter.to}::date`;
  const ofUser = filter.userId ? sql` and u.user_id = ${filter.userId}::uuid` : sql``;
  const ofKey = filter.keyId ? sql` and u.key_id = ${filter.keyId}::uuid` : sql``;
  return sql`${inRange}${ofUser}${ofKey}`;
}

/**
 * The rows behind a usage answer (counts arrive as numeric strings): totals per day with every day
 * of the range present, totals per endpoint, totals per key (and per member's console calls), and
 * the daily rows themselves for the per-day series.
 */
export async function usageRows(db: Db, filter: UsageFilter) {
  const where = usageWhere(filter);
  const days = await db.execute<{ day: string; units: string; requests: string }>(sql`
      select to_char(d.day, 'YYYY-MM-DD') as day, coalesce(sum(u.units), 0) as units, coalesce(sum(u.requests), 0) as requests
      from generate_series(${filter.from}::date, ${filter.to}::date, interval '1 day') as d(day)
      left join usage_daily u on u.day = d.day::date and ${where}
      group by d.day order by d.day`);
  const endpoints = await db.execute<{ endpoint: string; units: string; requests: string }>(sql`
      select u.endpoint, sum(u.units) as units, sum(u.requests) as requests
      from usage_daily u where ${where} group by u.endpoint order by u.endpoint`);
  const keys = await db.execute<{ key_id: string | null; name: string | null; display_start: string | null; user_id: string; units: string; requests: string }>(sql`
      select u.key_id, k.name, k.display_start, u.user_id, sum(u.units) as units, sum(u.requests) as requests
      from usage_daily u left join api_keys k on k.id = u.key_id and k.organisation_id = u.organisation_id
      where ${where} group by u.key_id, k.name, k.display_start, u.user_id order by sum(u.units) desc, u.key_id`);
  const daily = await db.execute<{ day: string; endpoint: string; key_id: string | null; user_id: string; units: string }>(sql`
      select to_char(u.day, 'YYYY-MM-DD') as day, u.endpoint, u.key_id, u.user_id, u.units
      from usage_daily u where ${where}`);
  return { days: days.rows, endpoints: endpoints.rows, keys: keys.rows, daily: daily.rows };
}
