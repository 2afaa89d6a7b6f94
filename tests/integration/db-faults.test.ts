import { spawn } from 'node:child_process';
import { chmodSync, mkdtempSync, rmSync } from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { and, eq, sql } from 'drizzle-orm';
import { pino } from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
// @ts-expect-error plain ESM script without types
import { ensureDatabase, startCluster } from '../../scripts/lib/postgres.mjs';
import { createApp, type GammalineApp } from '../../server/app.ts';
import { testConfig } from '../../server/config.ts';
import { openDatabase, type Database } from '../../server/db/client.ts';
import { migrateDatabase } from '../../server/db/migrate.ts';
import { keyQuotaDays, usageDaily, users } from '../../server/db/schema.ts';
import { seedDemo } from '../../server/demo/seed.ts';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { utcDay } from '../../server/quota/day.ts';
import { MAX_PREFETCH } from '../../server/quota/key-leases.ts';
import { settleQuota } from '../helpers/app.ts';
import { inPool, listen, send, type Answer } from '../helpers/live-server.ts';

// PostgreSQL stopped under load and started again. The run's shared cluster cannot be stopped, so this
// file starts a cluster of its own. A restarted cluster listens on a new free port (scripts/lib/postgres.mjs),
// so the app reaches it through a loopback relay whose target follows the cluster: the app keeps one
// DATABASE_URL, as it would behind a fixed host name. Expectations: RFC 9110 §15.6.4 (503 with
// Retry-After), RFC 9457 problem bodies, and the quota counted exactly (common practice: no unit lost,
// none spent twice).

type Cluster = { port: number; stop: () => void };

let scratch: string;
let cluster: Cluster | undefined;
let targetPort = 0;
let relay: net.Server;
let database: Database;
let app: GammalineApp | undefined;
let live: Awaited<ReturnType<typeof listen>>;
let keySecret: string;
let keyId: string;
let databaseUrl: string;

/** Forwards loopback connections to whatever port the cluster listens on now; refused while it is down. */
function startRelay(): Promise<number> {
  relay = net.createServer((client) => {
    const upstream = net.connect(targetPort, '127.0.0.1');
    client.pipe(upstream).pipe(client);
    const end = () => {
      client.destroy();
      upstream.destroy();
    };
    client.on('error', end);
    upstream.on('error', end);
    client.on('close', end);
    upstream.on('close', end);
  });
  return new Promise((resolve) => relay.listen(0, '127.0.0.1', () => resolve((relay.address() as net.AddressInfo).port)));
}

async function startPostgres(): Promise<void> {
  cluster = (await startCluster({ dataDir: path.join(scratch, 'pg'), throwaway: true })) as Cluster;
  targetPort = cluster.port;
}

function stopPostgres(): void {
  cluster?.stop();
  cluster = undefined;
}

beforeAll(async () => {
  scratch = mkdtempSync(path.join(os.tmpdir(), 'gammaline-faults-'));
  // mkdtemp makes a 0700 folder; the postgres user must be able to traverse it (see scripts/test.mjs).
  chmodSync(scratch, 0o755);
  await startPostgres();
  ensureDatabase(cluster!.port, 'faults');
  const relayPort = await startRelay();
  databaseUrl = `postgres://postgres@127.0.0.1:${relayPort}/faults`;
  database = openDatabase(databaseUrl);
  await migrateDatabase(database.pool);
  const config = testConfig({ databaseUrl });
  const seeded = await seedDemo(database.db, config.demoAdmin);
  const [developer] = await database.db
    .insert(users)
    .values({ organisationId: seeded.organisationId, email: 'rook.hallam@kestrel-ridge.example', displayName: 'Rook Hallam', role: 'developer' })
    .returning();
  const key = await createKey(
    database.db,
    { organisationId: seeded.organisationId, ownerId: developer!.id, name: 'faults', note: '', dailyQuota: 10_000_000, burstPerMinute: 1_000_000, actor: { userId: seeded.adminId, label: 'test' } },
    new Date(),
  );
  keySecret = key.secret;
  keyId = key.key.id;
  app = createApp({ database, config, logger: pino({ level: 'silent' }) });
  live = await listen(app);
}, 120_000);

afterAll(async () => {
  await live?.close();
  await app?.close();
  await database?.close().catch(() => {});
  relay?.close();
  stopPostgres();
  if (scratch) rmSync(scratch, { recursive: true, force: true });
});

const calculation = () => ({
  method: 'POST',
  path: '/api/v1/mismatch',
  headers: { authorization: `Bearer ${keySecret}`, 'content-type': 'application/json' },
  body: JSON.stringify({ swr: 1.5 }),
});

describe('PostgreSQL stopped under load', () => {
  it('answers 503 problems with Retry-After while it is down, recovers within 5 s, and counts every admitted unit exactly once', async () => {
    const answers: (Answer & { at: number })[] = [];
    let running = true;
    let restartedAt = Number.POSITIVE_INFINITY;
    const load = inPool(Array.from({ length: 8 }), 8, async () => {
      while (running) answers.push({ ...(await send(live.base, calculation(), 10_000)), at: performance.now() });
    });

    await new Promise((r) => setTimeout(r, 800));
    stopPostgres();
    await new Promise((r) => setTimeout(r, 2_000));
    await startPostgres();
    restartedAt = performance.now();
    // Keep the load on until the first success after the restart, and at most 5 s (the promise).
    while (performance.now() - restartedAt < 5_000 && !answers.some((a) => a.status === 200 && a.at > restartedAt)) {
      await new Promise((r) => setTimeout(r, 50));
    }
    const firstSuccess = answers.find((a) => a.status === 200 && a.at > restartedAt);
    running = false;
    await load;

    expect(answers.filter((a) => a.timedOut)).toEqual([]);
    const statuses = new Set(answers.map((a) => a.status));
    expect([...statuses].filter((s) => s !== 200 && s !== 503), `statuses ${[...statuses].join(', ')}`).toEqual([]);
    const unavailable = answers.filter((a) => a.status === 503);
    expect(unavailable.length).toBeGreaterThan(0);
    for (const a of unavailable) {
      expect(a.contentType).toMatch(/^application\/problem\+json/);
      expect(Number(a.headers.get('retry-after'))).toBeGreaterThan(0);
    }
    expect(firstSuccess, 'no 200 within 5 s of PostgreSQL coming back').toBeDefined();
    expect(firstSuccess!.at - restartedAt).toBeLessThan(5_000);

    // Each 200 spent one unit. A 503 spent none. Once the process has given its unspent reservations
    // back and written its buffered usage (quota leases, server/quota/key-leases.ts), usage shows exactly
    // the admitted calls, and the quota exactly those too, unless a reservation committed in the database
    // and the answer was lost when it died: such an in-doubt lease (at most what the waiting calls needed
    // plus MAX_PREFETCH) is the only slack allowed, and it errs on the side of never overspending.
    await settleQuota(app!);
    const succeeded = answers.filter((a) => a.status === 200).length;
    const day = utcDay(new Date());
    const [quota] = await database.db.select({ used: keyQuotaDays.used }).from(keyQuotaDays).where(and(eq(keyQuotaDays.keyId, keyId), eq(keyQuotaDays.day, day)));
    const [usage] = await database.db
      .select({ units: sql<number>`coalesce(sum(${usageDaily.units}), 0)::int`, requests: sql<number>`coalesce(sum(${usageDaily.requests}), 0)::int` })
      .from(usageDaily)
      .where(and(eq(usageDaily.keyId, keyId), eq(usageDaily.day, day)));
    expect(usage!.units, 'usage records of the admitted calls').toBe(succeeded);
    expect(usage!.requests).toBe(succeeded);
    expect(quota!.used).toBeGreaterThanOrEqual(succeeded);
    expect(quota!.used - succeeded, 'units reserved by an in-doubt lease').toBeLessThanOrEqual(8 + MAX_PREFETCH);

    expect((await send(live.base, { method: 'GET', path: '/healthz' })).status).toBe(200);
    expect((await send(live.base, { method: 'GET', path: '/readyz' })).status).toBe(200);
  }, 60_000);
});

describe('a database that is down when the process starts', () => {
  // The process waits for its database instead of exiting (server/index.ts prepareWhenReachable):
  // it listens at once, /healthz answers, and everything else is a 503 problem with Retry-After.
  it('keeps the server process alive, answering /healthz and 503 problems while PostgreSQL is unreachable', async () => {
    const child = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], {
      env: { ...process.env, DATABASE_URL: 'postgres://postgres@127.0.0.1:9/unreachable', PORT: '0', LOG_LEVEL: 'silent', NODE_ENV: 'development', SMTP_URL: 'smtp://127.0.0.1:9' },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    try {
      let output = '';
      child.stdout.on('data', (c: Buffer) => (output += c.toString()));
      const exited = new Promise<number | null>((resolve) => child.on('exit', (code) => resolve(code)));
      const alive = await Promise.race([exited.then(() => false), new Promise<boolean>((r) => setTimeout(() => r(true), 8_000))]);
      expect(alive, 'server/index.ts exited while PostgreSQL was down').toBe(true);
      const url = /http:\/\/[\d.]+:\d+/.exec(output)?.[0];
      expect(url).toBeDefined();
      expect((await fetch(`${url}/healthz`)).status).toBe(200);
      const waiting = await fetch(`${url}/api/v1/cables`);
      expect(waiting.status).toBe(503);
      expect(waiting.headers.get('content-type')).toMatch(/application\/problem\+json/);
      expect(waiting.headers.get('retry-after')).toBe('5');
    } finally {
      child.kill('SIGKILL');
    }
  }, 30_000);
});
