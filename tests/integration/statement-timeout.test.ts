import pg from 'pg';
import { pino } from 'pino';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp, type GammalineApp } from '../../server/app.ts';
import { openDatabase, type Database } from '../../server/db/client.ts';
import { migrateDatabase } from '../../server/db/migrate.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// A statement held up by a lock elsewhere is cancelled by PostgreSQL's statement_timeout (SQLSTATE
// 57014, PostgreSQL manual, "Client Connection Defaults") and the request answers 503 with Retry-After
// (RFC 9110 §15.6.4) as an RFC 9457 problem, instead of holding the request and a pool connection.

const TIMEOUT_MS = 300;

let ctx: TestApp;
let slow: Database;
let locker: pg.Client;
let slowApp: GammalineApp | undefined;

beforeAll(async () => {
  ctx = await createTestApp();
  slow = openDatabase(ctx.database.url, { statementTimeoutMs: TIMEOUT_MS });
  locker = new pg.Client({ connectionString: ctx.database.url });
  await locker.connect();
});

afterAll(async () => {
  await locker.end();
  await slowApp?.close();
  await slow.close();
  await ctx.close();
});

describe('the serving pool’s statement timeout', () => {
  it('answers 503 with Retry-After while a table is locked past the timeout, and 200 once it is free', async () => {
    const app = (slowApp = createApp({ database: slow, config: ctx.config, logger: pino({ level: 'silent' }) }));
    expect((await request(app).get('/api/v1/feedlines').set(ctx.auth)).status).toBe(200);

    await locker.query('begin');
    await locker.query('lock table feedlines in access exclusive mode');
    try {
      const started = performance.now();
      const res = await request(app).get('/api/v1/feedlines').set(ctx.auth);
      expect(performance.now() - started).toBeGreaterThanOrEqual(TIMEOUT_MS - 50);
      expect(res.status).toBe(503);
      expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
      expect(res.headers['retry-after']).toBe('5');
      expect(res.body).toMatchObject({ status: 503, detail: expect.stringMatching(/too long/) });
    } finally {
      await locker.query('rollback');
    }
    expect((await request(app).get('/api/v1/feedlines').set(ctx.auth)).status).toBe(200);
  });

  it('does not apply to migrations, which may wait for another process; the connection gets its timeout back', async () => {
    const one = openDatabase(ctx.database.url, { max: 1, statementTimeoutMs: TIMEOUT_MS });
    try {
      // Another process migrating: it holds the migration lock for longer than the timeout.
      await locker.query('select pg_advisory_lock(7340021)');
      const migrating = migrateDatabase(one.pool);
      await new Promise((resolve) => setTimeout(resolve, 2 * TIMEOUT_MS));
      await locker.query('select pg_advisory_unlock(7340021)');
      await expect(migrating).resolves.toBeUndefined();
      const shown = await one.pool.query<{ statement_timeout: string }>('show statement_timeout');
      expect(shown.rows[0]!.statement_timeout).toBe(`${TIMEOUT_MS}ms`);
    } finally {
      await one.close();
    }
  });
});
