import type { Db } from '../../../db/client.ts';
import type { Caller } from '../../../auth/caller.ts';
import { ApiError } from '../../../http/problem.ts';
import { usageRows } from './usage.repository.ts';
import type { Usage, UsageQuery } from './usage.schemas.ts';

/** A year of days is plenty for a chart and keeps the series bounded. */
const MAX_DAYS = 366;
const DEFAULT_DAYS = 30;

/** The UTC day `count` days after `day` (before, when negative), both as YYYY-MM-DD. */
function addDays(day: string, count: number): string {
  const date = new Date(`${day}T00:00:00Z`);
  date.setUTCDate(date.getUTCDate() + count);
  return date.toISOString().slice(0, 10);
}

/**
 * Usage per day, endpoint and key. Developers and keys see their own (their keys plus their console
 * calls); admins signed in to the console see the whole organisation, optionally one member or key.
 */
export async function usageReport(db: Db, caller: Caller, query: UsageQuery, today: string): Promise<Usage> {
  const to = query.to ?? today;
  const from = query.from ?? addDays(to, -(DEFAULT_DAYS - 1));
  if (from > to) throw new ApiError('unprocessable', 'from must not be after to.', { errors: [{ field: 'from', message: 'must be on or before `to`' }] });
  if (addDays(from, MAX_DAYS - 1) < to) {
    throw new ApiError('unprocessable', `Ask for at most ${MAX_DAYS} days at a time.`, { errors: [{ field: 'from', message: `the range is longer than ${MAX_DAYS} days` }] });
  }
  const isAdmin = caller.role === 'admin' && caller.kind === 'session';
  if (!isAdmin && query.userId && query.userId !== caller.userId) throw new ApiError('forbidden', 'Only admins (signed in to the console) see other members\' usage; leave out userId.');
  const userId = isAdmin ? query.userId : caller.userId;

  const rows = await usageRows(db, { organisationId: caller.organisationId, from, to, userId, keyId: query.keyId });

  const days = rows.days.map((row) => ({ day: row.day, units: Number(row.units), requests: Number(row.requests) }));
  const dayIndex = new Map(days.map((entry, index) => [entry.day, index]));
  const byEndpointSeries = new Map<string, number[]>();
  const byKeySeries = new Map<string, { keyId: string | null; userId: string; units: number[] }>();
  for (const row of rows.daily) {
    const index = dayIndex.get(row.day);
    if (index === undefined) continue;
    const endpointUnits = byEndpointSeries.get(row.endpoint) ?? new Array<number>(days.length).fill(0);
    endpointUnits[index]! += Number(row.units);
    byEndpointSeries.set(row.endpoint, endpointUnits);
    const seriesKey = row.key_id ?? `console:${row.user_id}`;
    const keySeries = byKeySeries.get(seriesKey) ?? { keyId: row.key_id, userId: row.user_id, units: new Array<number>(days.length).fill(0) };
    keySeries.units[index]! += Number(row.units);
    byKeySeries.set(seriesKey, keySeries);
  }
  return {
    scope: isAdmin && !query.userId ? 'organisation' : 'own',
    from,
    to,
    totalUnits: days.reduce((sum, day) => sum + day.units, 0),
    totalRequests: days.reduce((sum, day) => sum + day.requests, 0),
    days,
    byEndpoint: rows.endpoints.map((row) => ({ endpoint: row.endpoint, units: Number(row.units), requests: Number(row.requests) })),
    byKey: rows.keys.map((row) => ({ keyId: row.key_id, keyName: row.name, displayStart: row.display_start, userId: row.user_id, units: Number(row.units), requests: Number(row.requests) })),
    dailyByEndpoint: [...byEndpointSeries].sort(([endpointA], [endpointB]) => endpointA.localeCompare(endpointB)).map(([endpoint, units]) => ({ endpoint, units })),
    dailyByKey: [...byKeySeries.values()],
  };
}
