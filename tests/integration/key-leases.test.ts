import { sql } from 'drizzle-orm';
import { pino } from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { systemClock } from '../../server/context.ts';
import { openDatabase, type Database } from '../../server/db/client.ts';
import { IDLE_RETURN_MS, KeyLeases, MAX_PREFETCH, type MeteredCall } from '../../server/quota/key-leases.ts';
import { startKeyServices, type KeyServices } from '../../server/quota/key-services.ts';
import { leaseKeyUnits, returnKeyLease } from '../../server/quota/quota.repository.ts';
import { createTestApp, offsetClock, type TestApp } from '../helpers/app.ts';

// Quota leases (server/quota/key-leases.ts): units reserved in blocks and spent in memory. What must hold
// whatever the timing: the day's total never passes the quota; a process holding unspent units gives them
// back before another one refuses a call; idle units go back; a crashed process loses at most its
// reservation (underuse, never overspend).

const logger = pino({ level: 'silent' });
const DAY = '2026-03-14';
let ctx: TestApp;
const handles: Database[] = [];
const started: KeyServices[] = [];

beforeAll(async () => {
  ctx = await createTestApp();
});
afterAll(async () => {
  await Promise.all(started.map((s) => s.stop()));
  await Promise.all(handles.map((h) => h.close()));
  await ctx.close();
});

async function newKey(name: string, dailyQuota: number, burstPerMinute = 1_000_000) {
  const created = await createKey(ctx.database.db, { organisationId: ctx.seed.organisationId, ownerId: ctx.seed.developerId, name, note: '', dailyQuota, burstPerMinute, actor: { userId: null, label: 'test' } }, new Date());
  return created.key.id;
}

/** A "server process": its own pool, listener and leases on the shared test database, and its own clock. */
async function instance(clock = offsetClock()): Promise<KeyServices> {
  const database = openDatabase(ctx.database.url, { max: 4 });
  handles.push(database);
  const services = startKeyServices({ database, logger, clock });
  started.push(services);
  for (let i = 0; i < 200 && !services.cacheUsable(); i++) await new Promise((r) => setTimeout(r, 10));
  expect(services.cacheUsable(), 'listener connected').toBe(true);
  return services;
}

const call = (keyId: string, units = 1): MeteredCall => ({ keyId, organisationId: ctx.seed.organisationId, userId: ctx.seed.developerId, endpoint: 'probe', day: DAY, units, burst: { row: `burst:key:${keyId}`, windowMs: 60_000 } });

/** Spends one unit at a time, as fast as the leases answer, until `count` calls or the first refusal. */
async function spendSequentially(leases: KeyLeases, keyId: string, count: number): Promise<number> {
  let admitted = 0;
  for (let i = 0; i < count; i++) {
    const d = await leases.spend(call(keyId));
    if (!d.admitted) break;
    admitted++;
  }
  return admitted;
}

async function dbState(keyId: string) {
  const used = await ctx.database.db.execute<{ used: number }>(sql`select used from key_quota_days where key_id = ${keyId}::uuid and day = ${DAY}::date`);
  const usage = await ctx.database.db.execute<{ units: number }>(sql`select coalesce(sum(units), 0)::int as units from usage_daily where key_id = ${keyId}::uuid`);
  const leased = await ctx.database.db.execute<{ units: number }>(sql`select coalesce(sum(units), 0)::int as units from quota_leases where key_id = ${keyId}::uuid`);
  return { used: used.rows[0]?.used ?? 0, usage: usage.rows[0]!.units, leased: leased.rows[0]!.units };
}

describe('quota leases', () => {
  it('reserve ahead of a busy key, and give idle units back so the database shows exactly what was spent', async () => {
    const keyId = await newKey('lease ahead', 100_000);
    const clock = offsetClock();
    const a = await instance(clock);
    const admitted = await spendSequentially(a.leases, keyId, 300);
    expect(admitted).toBe(300);
    // A sequential burst of calls makes the process hold units in advance (at most MAX_PREFETCH).
    const held = a.leases.unspent(keyId, DAY);
    expect(held).toBeGreaterThan(0);
    expect(held).toBeLessThanOrEqual(MAX_PREFETCH);
    const during = await dbState(keyId);
    expect(during.used).toBe(300 + held);

    // Once the key has been idle for IDLE_RETURN_MS (skipped, not waited for), the next flush interval
    // gives the units back and writes the usage.
    clock.advance(IDLE_RETURN_MS);
    let after = await dbState(keyId);
    for (let i = 0; i < 50 && (after.used !== 300 || after.usage !== 300); i++) {
      await new Promise((r) => setTimeout(r, 100));
      after = await dbState(keyId);
    }
    expect(after).toEqual({ used: 300, usage: 300, leased: 0 });
    expect(a.leases.unspent(keyId, DAY)).toBe(0);
  });

  it('let another process take the units a process holds unspent before it refuses anything', async () => {
    const quota = 400;
    const keyId = await newKey('reclaimed', quota);
    const a = await instance();
    const b = await instance();
    const spentByA = await spendSequentially(a.leases, keyId, 200);
    expect(spentByA).toBe(200);
    expect(a.leases.unspent(keyId, DAY), 'A holds units in advance').toBeGreaterThan(0);

    // B spends until refused: it must get every unit A did not spend, A's reservation included.
    const spentByB = await spendSequentially(b.leases, keyId, quota);
    expect(spentByA + spentByB).toBe(quota);
    expect(a.leases.unspent(keyId, DAY)).toBe(0);
    const refused = await b.leases.spend(call(keyId));
    expect(refused).toMatchObject({ admitted: false, refusedBy: 'quota', used: quota, quota });

    await Promise.all([a.leases.settle(), b.leases.settle()]);
    expect(await dbState(keyId)).toEqual({ used: quota, usage: quota, leased: 0 });
  });

  it('give units back on request even while calls keep coming, so the quota is spent to the last unit', async () => {
    const quota = 600;
    const keyId = await newKey('busy holder', quota);
    const a = await instance();
    const b = await instance();
    let spentByA = 0;
    let aRefused = false;
    // A keeps calling, one call after another, until it is refused.
    const busy = (async () => {
      while (!aRefused) {
        const d = await a.leases.spend(call(keyId));
        if (d.admitted) spentByA++;
        else aRefused = true;
      }
    })();
    await new Promise((r) => setTimeout(r, 50));
    const spentByB = await spendSequentially(b.leases, keyId, quota);
    await busy;
    expect(spentByA + spentByB).toBe(quota);
    await Promise.all([a.leases.settle(), b.leases.settle()]);
    expect(await dbState(keyId)).toEqual({ used: quota, usage: quota, leased: 0 });
  });

  it('never pass the quota with many calls in flight on two processes, multi-unit calls included', async () => {
    const quota = 1_000;
    const keyId = await newKey('contended leases', quota);
    const [a, b] = [await instance(), await instance()];
    let admittedUnits = 0;
    await Promise.all(
      Array.from({ length: 1_200 }, async (_, i) => {
        const units = 1 + (i % 3);
        const d = await (i % 2 ? a : b).leases.spend(call(keyId, units));
        if (d.admitted) admittedUnits += units;
      }),
    );
    expect(admittedUnits).toBeLessThanOrEqual(quota);
    // Calls of 1 unit keep coming after the quota is nearly spent, so at most 2 units stay unused.
    expect(admittedUnits).toBeGreaterThanOrEqual(quota - 2);
    await Promise.all([a.leases.settle(), b.leases.settle()]);
    expect(await dbState(keyId)).toEqual({ used: admittedUnits, usage: admittedUnits, leased: 0 });
  });

  it('count per-minute hits across processes: exactly the burst limit is admitted', async () => {
    const keyId = await newKey('burst leases', 100_000, 50);
    const [a, b] = [await instance(), await instance()];
    const decisions = await Promise.all(Array.from({ length: 130 }, (_, i) => (i % 2 ? a : b).leases.spend(call(keyId))));
    expect(decisions.filter((d) => d.admitted)).toHaveLength(50);
    expect(decisions.filter((d) => d.refusedBy === 'burst')).toHaveLength(80);
    await Promise.all([a.leases.settle(), b.leases.settle()]);
    expect((await dbState(keyId)).used).toBe(50);
  });

  it('never refuse a call for hits of a minute window that ended while the lease was on its way', async () => {
    const keyId = await newKey('window edge', 100_000, 1_000_000_000);
    const clock = offsetClock(100);
    const a = await instance(clock);
    // The key's current window ends 40 ms from now by the database's clock, and this process's clock
    // runs 100 ms ahead: the lease grants hits of a window this process may see as over. Such a call
    // was once refused as over a burst limit of a billion.
    await ctx.database.db.execute(
      sql`insert into rate_limit_hits (key, hits, reset_at) values (${`burst:key:${keyId}`}, 0, now() + interval '40 milliseconds')
          on conflict (key) do update set hits = 0, reset_at = excluded.reset_at`,
    );
    const decision = await a.leases.spend(call(keyId));
    expect(decision).toMatchObject({ admitted: true });
    expect(decision.burst!.resetAtMs).toBeGreaterThan(clock.nowMs());
    await a.leases.settle();
    expect((await dbState(keyId)).used).toBe(1);
  });

  it('apply a return once, even when it is sent again after its answer was lost', async () => {
    const keyId = await newKey('return twice', 1_000);
    const instanceId = '00000000-0000-4000-8000-00000000abcd';
    const grant = await leaseKeyUnits(ctx.database.db, { instanceId, keyId, day: DAY, needUnits: 40, needHits: 0, extraUnits: 0, extraHits: 0, unspent: 0 });
    expect(grant.units).toBe(40);
    const giveBack = { instanceId, keyId, day: DAY, units: 40, hits: 0 };
    await returnKeyLease(ctx.database.db, giveBack);
    await returnKeyLease(ctx.database.db, giveBack);
    expect(await dbState(keyId)).toEqual({ used: 0, usage: 0, leased: 0 });
  });

  it('lose at most the reservation of a process that dies, and never overspend because of it', async () => {
    const quota = 500;
    const keyId = await newKey('crashed holder', quota);
    // A process that dies without giving anything back: its leases are never settled or stopped.
    const doomedHandle = openDatabase(ctx.database.url, { max: 2 });
    handles.push(doomedHandle);
    const doomed = new KeyLeases(doomedHandle.db, logger, systemClock);
    const spentBeforeCrash = await spendSequentially(doomed, keyId, 200);
    const lost = doomed.unspent(keyId, DAY);
    expect(spentBeforeCrash).toBe(200);
    expect(lost).toBeGreaterThan(0);

    const survivor = await instance();
    const spentAfter = await spendSequentially(survivor.leases, keyId, quota);
    // The dead process's unspent reservation stays counted (underuse, bounded by one lease), the rest is spendable.
    expect(spentBeforeCrash + spentAfter).toBe(quota - lost);
    expect(lost).toBeLessThanOrEqual(MAX_PREFETCH);
    await survivor.leases.settle();
    const state = await dbState(keyId);
    expect(state.used).toBe(quota);
    // Its unflushed usage records are lost with it (at most one flush interval); the survivor's are all there.
    expect(state.usage).toBeGreaterThanOrEqual(spentAfter);
    expect(state.usage).toBeLessThanOrEqual(spentAfter + spentBeforeCrash);
  });
});
