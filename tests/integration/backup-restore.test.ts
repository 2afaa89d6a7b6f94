import { execFile } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { mkdtemp, rm } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import pg from 'pg';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp, type GammalineApp } from '../../server/app.ts';
import { testConfig } from '../../server/config.ts';
import { openDatabase, type Database } from '../../server/db/client.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// The operator's guide (docs/operations.md, "Backups"): `pg_dump --format=custom` of the live database,
// `pg_restore --no-owner` into an empty one, and the app runs on the copy as on the original.

const run = promisify(execFile);

let ctx: TestApp;
let workDir: string;
let restoredName: string;
let restored: Database | undefined;
let restoredApp: GammalineApp | undefined;

/** The answers the original gave, which the restored copy must give again. */
let original: { sweepId: string; keyIds: string[]; usage: unknown };

const serverUrl = () => process.env.TEST_PG_SERVER_URL!;

async function onServer(sql: string): Promise<void> {
  const admin = new pg.Client({ connectionString: `${serverUrl()}/postgres` });
  await admin.connect();
  try {
    await admin.query(sql);
  } finally {
    await admin.end();
  }
}

const TOUCHSTONE = '! a three-point probe sweep\n# MHz S RI R 50\n7.000 0.10 0.05\n7.100 0.05 0.00\n7.200 0.12 -0.06\n';

beforeAll(async () => {
  ctx = await createTestApp();
  workDir = await mkdtemp(path.join(os.tmpdir(), 'gammaline-backup-'));
  restoredName = `r_${randomBytes(6).toString('hex')}`;

  // Usage with the seeded key, a stored sweep, and everything written (leases settled, usage flushed).
  for (let i = 0; i < 3; i++) await request(ctx.app).post('/api/v1/mismatch').set(ctx.auth).send({ swr: 1.5 }).expect(200);
  const upload = await request(ctx.app).post('/api/v1/sweeps').set(ctx.auth).attach('file', Buffer.from(TOUCHSTONE), 'probe.s1p').expect(201);
  await ctx.settle();
  const admin = await ctx.adminAgent();
  const keys = await admin.get('/api/v1/keys').expect(200);
  const usage = await request(ctx.app).get('/api/v1/usage').set(ctx.auth).expect(200);
  original = { sweepId: upload.body.id as string, keyIds: (keys.body.keys as { id: string }[]).map((k) => k.id).sort(), usage: usage.body };
}, 60_000);

afterAll(async () => {
  await restoredApp?.close();
  await restored?.close();
  if (restoredName) await onServer(`drop database if exists ${restoredName} with (force)`);
  if (workDir) await rm(workDir, { recursive: true, force: true });
  await ctx.close();
});

describe('a pg_dump of a live database, restored into a fresh one', () => {
  it('dumps and restores without errors', async () => {
    const dump = path.join(workDir, 'gammaline.dump');
    await run('pg_dump', ['--format=custom', '--file', dump, ctx.database.url]);
    await onServer(`create database ${restoredName}`);
    await run('pg_restore', ['--no-owner', '--exit-on-error', '--dbname', `${serverUrl()}/${restoredName}`, dump]);

    restored = openDatabase(`${serverUrl()}/${restoredName}`);
    restoredApp = createApp({ database: restored, config: testConfig({ databaseUrl: `${serverUrl()}/${restoredName}` }) });
  }, 60_000);

  it('reports the same usage as the original', async () => {
    // Read before the restored app spends anything itself.
    const usage = await request(restoredApp!).get('/api/v1/usage').set(ctx.auth).expect(200);
    expect(JSON.stringify(original.usage)).toMatch(/"units":[1-9]/);
    expect(usage.body).toEqual(original.usage);
  });

  it('accepts the same key and counts its calls against the same quota', async () => {
    const before = await request(ctx.app).post('/api/v1/mismatch').set(ctx.auth).send({ swr: 1.5 }).expect(200);
    const res = await request(restoredApp!).post('/api/v1/mismatch').set(ctx.auth).send({ swr: 1.5 }).expect(200);
    // The same units remain in both: the copy carries the day's spending (each side spent one more since).
    const remaining = (header: string) => Number(/"daily"; r=(\d+)/.exec(header)?.[1]);
    expect(remaining(res.headers.ratelimit as string)).toBe(remaining(before.headers.ratelimit as string));
  });

  it('lists the same keys to a signed-in admin', async () => {
    const agent = request.agent(restoredApp!);
    const session = await agent.post('/api/v1/session').send({ email: ctx.seed.adminEmail, password: ctx.config.demoAdmin.password }).expect(200);
    const keys = await agent.get('/api/v1/keys').set('X-CSRF-Token', session.body.csrfToken as string).expect(200);
    expect((keys.body.keys as { id: string }[]).map((k) => k.id).sort()).toEqual(original.keyIds);
  });

  it('serves the stored sweep with its points', async () => {
    const list = await request(restoredApp!).get('/api/v1/sweeps').set(ctx.auth).expect(200);
    expect(JSON.stringify(list.body)).toContain(original.sweepId);
    const sweep = await request(restoredApp!).get(`/api/v1/sweeps/${original.sweepId}`).set(ctx.auth).expect(200);
    expect(sweep.body.id).toBe(original.sweepId);
  });

});
