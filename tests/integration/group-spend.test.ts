import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { sql } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { openDatabase, type Database } from '../../server/db/client.ts';
import { spendKeyUnitsGroup } from '../../server/quota/quota.repository.ts';
import { createMeteredApp, createTestApp, settleQuota, type MeteredApp, type TestApp } from '../helpers/app.ts';

// The database's group statement (NDJSON blocks) decides every spend of a group first fit in arrival
// order; two processes metering through quota leases never spend more than the quota or the burst
// limit, and once they settle the database shows exactly what was spent.

let ctx: TestApp;
const pools: Database[] = [];
/** One metered app per pool: each stands in for a server process. */
const apps: MeteredApp[] = [];
const servers: Server[] = [];
const urls: string[] = [];
const DAY = '2026-03-14';

function listen(app: Parameters<typeof createServer>[1]): Promise<string> {
  const server = createServer(app);
  servers.push(server);
  return new Promise((resolve) => server.listen(0, '127.0.0.1', () => resolve(`http://127.0.0.1:${(server.address() as AddressInfo).port}`)));
}

beforeAll(async () => {
  ctx = await createTestApp();
  for (let i = 0; i < 2; i++) {
    const database = openDatabase(ctx.database.url, { max: 5 });
    pools.push(database);
    const app = createMeteredApp({ database, config: ctx.config });
    apps.push(app);
    urls.push(await listen(app));
  }
});
afterAll(async () => {
  await Promise.all(servers.map((s) => new Promise((r) => s.close(r))));
  await Promise.all(apps.map((app) => app.close()));
  await Promise.all(pools.map((p) => p.close()));
  await ctx.close();
});

async function newKey(name: string, limits: { dailyQuota: number; burstPerMinute: number }) {
  return createKey(ctx.database.db, { organisationId: ctx.seed.organisationId, ownerId: ctx.seed.developerId, name, note: '', ...limits, actor: { userId: null, label: 'test' } }, new Date());
}

async function usage(keyId: string) {
  const res = await ctx.database.db.execute(sql`select endpoint, units, requests from usage_daily where key_id = ${keyId}::uuid order by endpoint`);
  return res.rows;
}

describe('one statement for a group of spends', () => {
  it('grants in arrival order whatever still fits, each request whole, and records exactly the granted usage', async () => {
    const key = await newKey('group', { dailyQuota: 10, burstPerMinute: 1_000 });
    const group = { keyId: key.key.id, organisationId: ctx.seed.organisationId, userId: ctx.seed.developerId, day: DAY };
    const results = await spendKeyUnitsGroup(ctx.database.db, {
      ...group,
      requests: [
        { units: 3, endpoint: 'mismatch' },
        { units: 3, endpoint: 'batch' },
        { units: 5, endpoint: 'batch' },
        { units: 1, endpoint: 'mismatch' },
        { units: 2, endpoint: 'line' },
      ],
    });
    expect(results.map((r) => r.admitted)).toEqual([true, true, false, true, true]);
    expect(results.every((r) => r.used === 9 && r.quota === 10)).toBe(true);
    expect(await usage(key.key.id)).toEqual([
      { endpoint: 'batch', units: 3, requests: 1 },
      { endpoint: 'line', units: 2, requests: 1 },
      { endpoint: 'mismatch', units: 4, requests: 2 },
    ]);

    const next = await spendKeyUnitsGroup(ctx.database.db, { ...group, requests: [{ units: 2, endpoint: 'line' }, { units: 1, endpoint: 'line' }] });
    expect(next.map((r) => r.admitted)).toEqual([false, true]);
    const spent = await ctx.database.db.execute(sql`select used from key_quota_days where key_id = ${key.key.id}::uuid`);
    expect(spent.rows).toEqual([{ used: 10 }]);
  });
});

describe('many concurrent multi-unit requests on two instances', () => {
  it('never spend more than the quota, and usage equals what was spent', async () => {
    const key = await newKey('mixed units', { dailyQuota: 500, burstPerMinute: 1_000_000 });
    const sizes = Array.from({ length: 400 }, (_, i) => 1 + (i % 4));
    let admittedUnits = 0;
    let admitted = 0;
    await Promise.all(
      sizes.map(async (units, i) => {
        const res = await fetch(`${urls[i % 2]}/metered`, { method: 'POST', headers: { Authorization: `Bearer ${key.secret}`, 'Content-Type': 'application/json' }, body: JSON.stringify({ units }) });
        await res.arrayBuffer();
        expect([200, 429]).toContain(res.status);
        if (res.status === 200) {
          admittedUnits += units;
          admitted++;
        }
      }),
    );
    expect(admittedUnits).toBeLessThanOrEqual(500);
    // Requests of 1 unit keep arriving after the quota is nearly spent, so at most 3 units stay unused.
    expect(admittedUnits).toBeGreaterThanOrEqual(497);
    await Promise.all(apps.map(settleQuota));
    const spent = await ctx.database.db.execute(sql`select used from key_quota_days where key_id = ${key.key.id}::uuid`);
    expect(spent.rows).toEqual([{ used: admittedUnits }]);
    expect(await usage(key.key.id)).toEqual([{ endpoint: 'probe', units: admittedUnits, requests: admitted }]);
  });
});

describe('coalesced burst hits', () => {
  it('admit exactly the per-minute limit across two instances', async () => {
    const key = await newKey('burst', { dailyQuota: 100_000, burstPerMinute: 37 });
    const statuses = await Promise.all(
      Array.from({ length: 120 }, async (_, i) => {
        const res = await fetch(`${urls[i % 2]}/metered`, { method: 'POST', headers: { Authorization: `Bearer ${key.secret}`, 'Content-Type': 'application/json' }, body: '{}' });
        await res.arrayBuffer();
        return res.status;
      }),
    );
    expect(statuses.filter((s) => s === 200)).toHaveLength(37);
    expect(statuses.filter((s) => s === 429)).toHaveLength(83);
    await Promise.all(apps.map(settleQuota));
    const spent = await ctx.database.db.execute(sql`select used from key_quota_days where key_id = ${key.key.id}::uuid`);
    expect(spent.rows).toEqual([{ used: 37 }]);
  });
});
