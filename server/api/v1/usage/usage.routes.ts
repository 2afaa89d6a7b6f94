import { Router } from 'express';
import { sql } from 'drizzle-orm';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireCaller } from '../../../auth/caller.ts';
import { keyServicesFor } from '../../../auth/key-services.ts';
import { authProblems, keyOrSession } from '../../../auth/openapi.ts';
import { ApiError } from '../../../http/problem.ts';
import { validateQuery } from '../../../http/validate.ts';
import { problemResponses, registry } from '../../../openapi/registry.ts';
import { utcDay } from '../../../quota/day.ts';
import { z } from '../../../zod.ts';

/** A year of days is plenty for a chart and keeps the series bounded. */
const MAX_DAYS = 366;
const DEFAULT_DAYS = 30;

const Day = z.iso.date({ message: 'use a UTC date such as 2026-03-14' });

const UsageQuerySchema = z.strictObject({
  from: Day.optional().openapi({ description: 'First UTC day (default: 29 days before `to`).', example: '2026-03-01' }),
  to: Day.optional().openapi({ description: 'Last UTC day, inclusive (default: today).', example: '2026-03-14' }),
  userId: z.uuid().optional().openapi({ description: 'Only this member (admins; others always see their own).' }),
  keyId: z.uuid().optional().openapi({ description: 'Only this key.' }),
});

const Counts = { units: z.number().int().openapi({ example: 420 }), requests: z.number().int().openapi({ example: 400 }) };

const UsageSchema = z
  .object({
    scope: z.enum(['own', 'organisation']).openapi({ description: '`own`: your keys and console calls; `organisation`: every member (admins).', example: 'own' }),
    from: z.string().openapi({ example: '2026-03-01' }),
    to: z.string().openapi({ example: '2026-03-14' }),
    totalUnits: z.number().int().openapi({ example: 1234 }),
    totalRequests: z.number().int().openapi({ example: 1200 }),
    days: z.array(z.object({ day: z.string().openapi({ example: '2026-03-14' }), ...Counts })).openapi({ description: 'One entry per UTC day in the range, zeros included.' }),
    byEndpoint: z.array(
      z.object({
        endpoint: z.string().openapi({
          description: 'What was charged: a calculation by its name (`mismatch`, `reflection`, `line`, `refer`, `match`, as in its path and batch op), `batch`, `cableAttenuation`, `feedlineLine`, `feedlineRefer` or `sweeps`.',
          example: 'mismatch',
        }),
        ...Counts,
      }),
    ),
    byKey: z
      .array(
        z.object({
          keyId: z.uuid().nullable().openapi({ description: 'null: calls made from the console with a session.' }),
          keyName: z.string().nullable().openapi({ example: 'Shack logger' }),
          displayStart: z.string().nullable().openapi({ example: 'gml_Xq3v9A' }),
          userId: z.uuid(),
          ...Counts,
        }),
      )
      .openapi({ description: 'Per key, and one entry per member for console calls.' }),
    dailyByEndpoint: z
      .array(z.object({ endpoint: z.string().openapi({ example: 'line' }), units: z.array(z.number().int()) }))
      .openapi({ description: 'Units per day for each endpoint; `units[i]` belongs to `days[i]`.' }),
    dailyByKey: z
      .array(
        z.object({
          keyId: z.uuid().nullable().openapi({ description: 'null: console calls of `userId`.' }),
          userId: z.uuid(),
          units: z.array(z.number().int()),
        }),
      )
      .openapi({ description: 'Units per day for each key (and each member\'s console calls); `units[i]` belongs to `days[i]`.' }),
  })
  .openapi('Usage');

registry.registerPath({
  method: 'get',
  path: '/api/v1/usage',
  operationId: 'getUsage',
  tags: ['Usage'],
  summary: 'Calculation usage per day, endpoint and key',
  description:
    'Developers, and every key, see their own usage: their keys plus their console calls. Admins signed in to the console see the whole organisation, optionally one member or key. ' +
    'Days are UTC. Reading usage spends no quota.',
  security: keyOrSession,
  request: { query: UsageQuerySchema },
  responses: { 200: { description: 'Daily series and breakdowns.', content: { 'application/json': { schema: UsageSchema } } }, ...problemResponses.validation, ...problemResponses.unprocessable, ...authProblems.unauthenticated, ...authProblems.forbidden },
});

function addDays(day: string, n: number): string {
  const d = new Date(`${day}T00:00:00Z`);
  d.setUTCDate(d.getUTCDate() + n);
  return d.toISOString().slice(0, 10);
}

export function usageRouter(ctx: AppContext): Router {
  const router = Router();

  router.get('/usage', requireCaller(ctx), validateQuery(UsageQuerySchema), async (_req, res) => {
    // Usage of key calls is buffered for up to a second; this process's own calls are shown at once.
    await keyServicesFor(ctx.database, ctx.logger).leases.flush();
    const caller = callerOf(res);
    const q = res.locals.query as z.infer<typeof UsageQuerySchema>;
    const to = q.to ?? utcDay(ctx.clock.now());
    const from = q.from ?? addDays(to, -(DEFAULT_DAYS - 1));
    if (from > to) throw new ApiError('unprocessable', 'from must not be after to.', { errors: [{ field: 'from', message: 'must be on or before `to`' }] });
    if (addDays(from, MAX_DAYS - 1) < to) {
      throw new ApiError('unprocessable', `Ask for at most ${MAX_DAYS} days at a time.`, { errors: [{ field: 'from', message: `the range is longer than ${MAX_DAYS} days` }] });
    }
    const isAdmin = caller.role === 'admin' && caller.kind === 'session';
    if (!isAdmin && q.userId && q.userId !== caller.userId) throw new ApiError('forbidden', 'Only admins (signed in to the console) see other members\' usage; leave out userId.');
    const userId = isAdmin ? q.userId : caller.userId;

    const filter = sql`u.organisation_id = ${caller.organisationId}::uuid and u.day between ${from}::date and ${to}::date`;
    const byUser = userId ? sql` and u.user_id = ${userId}::uuid` : sql``;
    const byKey = q.keyId ? sql` and u.key_id = ${q.keyId}::uuid` : sql``;
    const where = sql`${filter}${byUser}${byKey}`;
    const db = ctx.database.db;

    const days = await db.execute<{ day: string; units: string; requests: string }>(sql`
      select to_char(d.day, 'YYYY-MM-DD') as day, coalesce(sum(u.units), 0) as units, coalesce(sum(u.requests), 0) as requests
      from generate_series(${from}::date, ${to}::date, interval '1 day') as d(day)
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

    const dayRows = days.rows.map((r) => ({ day: r.day, units: Number(r.units), requests: Number(r.requests) }));
    const dayIndex = new Map(dayRows.map((d, i) => [d.day, i]));
    const byEndpointSeries = new Map<string, number[]>();
    const byKeySeries = new Map<string, { keyId: string | null; userId: string; units: number[] }>();
    for (const r of daily.rows) {
      const i = dayIndex.get(r.day);
      if (i === undefined) continue;
      const endpointUnits = byEndpointSeries.get(r.endpoint) ?? new Array<number>(dayRows.length).fill(0);
      endpointUnits[i]! += Number(r.units);
      byEndpointSeries.set(r.endpoint, endpointUnits);
      const seriesKey = r.key_id ?? `console:${r.user_id}`;
      const keySeries = byKeySeries.get(seriesKey) ?? { keyId: r.key_id, userId: r.user_id, units: new Array<number>(dayRows.length).fill(0) };
      keySeries.units[i]! += Number(r.units);
      byKeySeries.set(seriesKey, keySeries);
    }
    res.json({
      scope: isAdmin && !q.userId ? 'organisation' : 'own',
      from,
      to,
      totalUnits: dayRows.reduce((s, r) => s + r.units, 0),
      totalRequests: dayRows.reduce((s, r) => s + r.requests, 0),
      days: dayRows,
      byEndpoint: endpoints.rows.map((r) => ({ endpoint: r.endpoint, units: Number(r.units), requests: Number(r.requests) })),
      byKey: keys.rows.map((r) => ({ keyId: r.key_id, keyName: r.name, displayStart: r.display_start, userId: r.user_id, units: Number(r.units), requests: Number(r.requests) })),
      dailyByEndpoint: [...byEndpointSeries].sort(([a], [b]) => a.localeCompare(b)).map(([endpoint, units]) => ({ endpoint, units })),
      dailyByKey: [...byKeySeries.values()],
    } satisfies z.infer<typeof UsageSchema>);
  });

  return router;
}
