import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { sql } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openDatabase, type Database } from '../../server/db/client.ts';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { createMeteredApp, createTestApp, settleQuota, type MeteredApp, type TestApp } from '../helpers/app.ts';

// Exact quotas under contention (common practice for metered APIs): N parallel requests against
// M < N remaining units admit exactly M, also with two server processes sharing the database.
// Two app instances on two separate pools stand in for the two processes.

const QUOTA = 1_000;
const REQUESTS = 2_000;
const IN_FLIGHT = 64;

let ctx: TestApp;
const pools: Database[] = [];
/** One metered app per pool: each stands in for a server process. */
const apps: MeteredApp[] = [];
const servers: Server[] = [];

function listen(app: Parameters<typeof createServer>[1]): Promise<string> {
  const server = createServer(app);
  servers.push(server);
  return new Promise((resolve) => server.listen(0, '127.0.0.1', () => resolve(`http://127.0.0.1:${(server.address() as AddressInfo).port}`)));
}

beforeAll(async () => {
  ctx = await createTestApp();
});
afterAll(async () => {
  await Promise.all(servers.map((s) => new Promise((r) => s.close(r))));
  await Promise.all(apps.map((app) => app.close()));
  await Promise.all(pools.map((p) => p.close()));
  await ctx.close();
});

describe('two app instances on one database', () => {
  it(`admit exactly ${QUOTA} of ${REQUESTS} concurrent requests against a ${QUOTA}-unit key, and refuse the rest with 429`, async () => {
    const key = await createKey(
      ctx.database.db,
      { organisationId: ctx.seed.organisationId, ownerId: ctx.seed.developerId, name: 'contended', note: '', dailyQuota: QUOTA, burstPerMinute: 1_000_000, actor: { userId: null, label: 'test' } },
      new Date(),
    );
    const urls: string[] = [];
    for (let i = 0; i < 2; i++) {
      const database = openDatabase(ctx.database.url, { max: 10 });
      pools.push(database);
      const app = createMeteredApp({ database, config: ctx.config, mailer: ctx.mailer });
      apps.push(app);
      urls.push(await listen(app));
    }

    const statuses = new Map<number, number>();
    let next = 0;
    async function worker(): Promise<void> {
      while (next < REQUESTS) {
        const i = next++;
        const res = await fetch(`${urls[i % 2]}/metered`, {
          method: 'POST',
          headers: { Authorization: `Bearer ${key.secret}`, 'Content-Type': 'application/json' },
          body: '{}',
        });
        await res.arrayBuffer();
        statuses.set(res.status, (statuses.get(res.status) ?? 0) + 1);
      }
    }
    await Promise.all(Array.from({ length: IN_FLIGHT }, worker));

    expect(Object.fromEntries(statuses)).toEqual({ 200: QUOTA, 429: REQUESTS - QUOTA });
    // Usage is buffered in each process for up to a second (quota leases); settling writes it.
    await Promise.all(apps.map(settleQuota));
    const spent = await ctx.database.db.execute(sql`select used from key_quota_days where key_id = ${key.key.id}::uuid`);
    expect(spent.rows).toEqual([{ used: QUOTA }]);
    const recorded = await ctx.database.db.execute(sql`select units, requests from usage_daily where key_id = ${key.key.id}::uuid`);
    expect(recorded.rows).toEqual([{ units: QUOTA, requests: QUOTA }]);
  }, 120_000);

  it('sends the 80 % and 100 % e-mails exactly once each, whichever instance crossed the line', async () => {
    let subjects: string[] = [];
    for (let i = 0; i < 100; i++) {
      const res = await ctx.database.db.execute<{ subject: string }>(sql`select subject from captured_mail where subject like '%"contended"%' order by subject`);
      subjects = res.rows.map((r) => r.subject);
      if (subjects.length >= 2) break;
      await new Promise((r) => setTimeout(r, 50));
    }
    await new Promise((r) => setTimeout(r, 300));
    const res = await ctx.database.db.execute<{ subject: string }>(sql`select subject from captured_mail where subject like '%"contended"%' order by subject`);
    expect(res.rows.map((r) => r.subject)).toEqual([
      'Gammaline key "contended" has used 80 % of its daily quota',
      'Gammaline key "contended" has used its whole daily quota',
    ]);
    expect(subjects).toHaveLength(2);
  });
});
