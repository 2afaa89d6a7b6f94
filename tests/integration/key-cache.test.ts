import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { sql } from 'drizzle-orm';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createKey, revokeKey } from '../../server/api/v1/keys/keys.service.ts';
import { KEY_LISTENER_APPLICATION } from '../../server/quota/key-services.ts';
import { openDatabase, type Database } from '../../server/db/client.ts';
import { users } from '../../server/db/schema.ts';
import { createMeteredApp, createTestApp, type MeteredApp, type TestApp } from '../helpers/app.ts';

// Verified keys are cached per process; key and member changes reach every process through
// PostgreSQL LISTEN/NOTIFY. Two app instances on two pools stand in for two server processes.

let ctx: TestApp;
let admin: Awaited<ReturnType<TestApp['adminAgent']>>;
const instances: { database: Database; app: MeteredApp; url: string }[] = [];
const servers: Server[] = [];

function listen(app: Parameters<typeof createServer>[1]): Promise<string> {
  const server = createServer(app);
  servers.push(server);
  return new Promise((resolve) => server.listen(0, '127.0.0.1', () => resolve(`http://127.0.0.1:${(server.address() as AddressInfo).port}`)));
}

async function until(condition: () => Promise<boolean> | boolean, withinMs: number): Promise<number> {
  const started = Date.now();
  while (!(await condition())) {
    if (Date.now() - started > withinMs) throw new Error(`condition not met within ${withinMs} ms`);
    await new Promise((r) => setTimeout(r, 10));
  }
  return Date.now() - started;
}

beforeAll(async () => {
  ctx = await createTestApp();
  admin = await ctx.adminAgent();
  for (let i = 0; i < 2; i++) {
    const database = openDatabase(ctx.database.url, { max: 5 });
    const app = createMeteredApp({ database, config: ctx.config });
    const url = await listen(app);
    instances.push({ database, app, url });
    // The listener connects in the background; tests start once both processes hear announcements.
    await until(() => app.keyServices.listener.healthy, 5_000);
  }
});
afterAll(async () => {
  await Promise.all(servers.map((s) => new Promise((r) => s.close(r))));
  await Promise.all(instances.map((i) => i.app.close()));
  await Promise.all(instances.map((i) => i.database.close()));
  await ctx.close();
});

async function newKey(name: string, ownerId = ctx.seed.developerId, limits = { dailyQuota: 1_000, burstPerMinute: 10_000 }) {
  return createKey(ctx.database.db, { organisationId: ctx.seed.organisationId, ownerId, name, note: '', ...limits, actor: { userId: null, label: 'test' } }, new Date());
}

async function status(url: string, secret: string, units = 1): Promise<number> {
  const res = await fetch(`${url}/metered`, { method: 'POST', headers: { Authorization: `Bearer ${secret}`, 'Content-Type': 'application/json' }, body: JSON.stringify({ units }) });
  await res.arrayBuffer();
  return res.status;
}

const cached = (i: number) => instances[i]!.app.keyServices.cache.size;

describe('a change is announced to every process', () => {
  it('refuses a revoked key on both instances within a second, although both had it cached', async () => {
    const key = await newKey('revoked everywhere');
    for (const { url } of instances) expect(await status(url, key.secret)).toBe(200);
    expect(cached(0)).toBeGreaterThan(0);
    expect(cached(1)).toBeGreaterThan(0);

    // Revoked from a third handle, as the CLI or another host would.
    await revokeKey(ctx.database.db, { organisationId: ctx.seed.organisationId, keyId: key.key.id, actor: { userId: null, label: 'test' } }, new Date());
    for (const { url } of instances) {
      const tookMs = await until(async () => (await status(url, key.secret)) === 401, 1_000);
      expect(tookMs).toBeLessThan(1_000);
    }
  });

  it('refuses the keys of a member disabled in the console on both instances within a second', async () => {
    const [member] = await ctx.database.db
      .insert(users)
      .values({ organisationId: ctx.seed.organisationId, email: 'tamsin.orrey@kestrel-ridge.example', displayName: 'Tamsin Orrey', role: 'developer', passwordHash: 'not-used' })
      .returning({ id: users.id });
    const ownerId = member!.id;
    const key = await newKey('owner disabled', ownerId);
    for (const { url } of instances) expect(await status(url, key.secret)).toBe(200);

    await admin.patch(`/api/v1/members/${ownerId}`).send({ disabled: true }).expect(200);
    try {
      for (const { url } of instances) await until(async () => (await status(url, key.secret)) === 401, 1_000);
    } finally {
      await admin.patch(`/api/v1/members/${ownerId}`).send({ disabled: false }).expect(200);
    }
    for (const { url } of instances) await until(async () => (await status(url, key.secret)) === 200, 1_000);
  });

  it('applies a changed origin list on both instances within a second, like a revocation', async () => {
    const fromPage = async (url: string, secret: string, origin: string) => {
      const res = await fetch(`${url}/metered`, { method: 'POST', headers: { Authorization: `Bearer ${secret}`, 'Content-Type': 'application/json', Origin: origin }, body: '{}' });
      await res.arrayBuffer();
      return res.status;
    };
    const key = await createKey(
      ctx.database.db,
      { organisationId: ctx.seed.organisationId, ownerId: ctx.seed.developerId, name: 'browser page', note: '', allowedOrigins: ['https://log.example.org'], actor: { userId: null, label: 'test' } },
      new Date(),
    );
    for (const { url } of instances) expect(await fromPage(url, key.secret, 'https://log.example.org')).toBe(200);

    await admin.patch(`/api/v1/keys/${key.key.id}`).send({ allowedOrigins: ['https://monitor.example.net'] }).expect(200);
    for (const { url } of instances) {
      const tookMs = await until(async () => (await fromPage(url, key.secret, 'https://log.example.org')) === 403, 1_000);
      expect(tookMs).toBeLessThan(1_000);
      expect(await fromPage(url, key.secret, 'https://monitor.example.net')).toBe(200);
    }
  });

  it('applies a lowered quota on the next request of either instance', async () => {
    const key = await newKey('lowered', ctx.seed.developerId, { dailyQuota: 100, burstPerMinute: 10_000 });
    expect(await status(instances[0]!.url, key.secret, 3)).toBe(200);
    expect(await status(instances[1]!.url, key.secret, 3)).toBe(200);
    await admin.patch(`/api/v1/keys/${key.key.id}`).send({ dailyQuota: 7 }).expect(200);
    // The quota is read under the day row's lock by the spend itself, so no announcement is awaited here.
    expect(await status(instances[1]!.url, key.secret, 2)).toBe(429);
    expect(await status(instances[0]!.url, key.secret, 1)).toBe(200);
    expect(await status(instances[1]!.url, key.secret, 1)).toBe(429);
  });
});

describe('while announcements may be missed', () => {
  it('empties the cache when the listening connection is lost, so a change made meanwhile is seen after reconnecting', async () => {
    const key = await newKey('unannounced');
    const { url, app } = instances[0]!;
    expect(await status(url, key.secret)).toBe(200);

    // A revocation that announces nothing (triggers off) stands in for an announcement lost in transit.
    await ctx.database.db.transaction(async (tx) => {
      await tx.execute(sql`set local session_replication_role = replica`);
      await tx.execute(sql`update api_keys set revoked_at = now() where id = ${key.key.id}::uuid`);
    });
    // The cache answers for the key: the database is not asked again while the listener is healthy.
    expect(await status(url, key.secret)).toBe(200);

    const services = app.keyServices;
    await ctx.database.db.execute(sql`select pg_terminate_backend(pid) from pg_stat_activity where application_name = ${KEY_LISTENER_APPLICATION} and datname = current_database()`);
    await until(async () => (await status(url, key.secret)) === 401, 1_000);
    await until(() => services.listener.healthy, 5_000);
    expect(await status(url, key.secret)).toBe(401);
    // The other instance lost its connection too and reconnects on its own.
    await until(() => instances[1]!.app.keyServices.listener.healthy, 5_000);
  });
});

describe('"last used" is written behind, in one statement per interval', () => {
  it('shows lastUsedAt on the key after a flush, and null before the key is used', async () => {
    const key = await newKey('last used');
    const before = await admin.get(`/api/v1/keys/${key.key.id}`).expect(200);
    expect(before.body.lastUsedAt).toBeNull();

    const sent = Date.now();
    expect(await status(instances[0]!.url, key.secret)).toBe(200);
    await instances[0]!.app.keyServices.lastUsed.flush();

    const after = await admin.get(`/api/v1/keys/${key.key.id}`).expect(200);
    expect(Date.parse(after.body.lastUsedAt)).toBeGreaterThanOrEqual(sent - 1_000);
    expect(Date.parse(after.body.lastUsedAt)).toBeLessThanOrEqual(Date.now());
  });

  it('writes pending "last used" times when the app is closed on shutdown', async () => {
    const key = await newKey('flushed on shutdown');
    const database = openDatabase(ctx.database.url, { max: 2 });
    const app = createMeteredApp({ database, config: ctx.config });
    const url = await listen(app);
    expect(await status(url, key.secret)).toBe(200);
    await app.close();
    await database.close();

    const rows = await ctx.database.db.execute<{ used: boolean }>(sql`select last_used_at is not null as used from api_keys where id = ${key.key.id}::uuid`);
    expect(rows.rows).toEqual([{ used: true }]);
  });
});
