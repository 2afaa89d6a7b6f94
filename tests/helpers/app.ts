import { hash } from '@node-rs/argon2';
import express, { type Express } from 'express';
import { pino } from 'pino';
import request from 'supertest';
import type TestAgent from 'supertest/lib/agent.js';
import { createApp } from '../../server/app.ts';
import { testConfig, type AppConfig } from '../../server/config.ts';
import { calculationGuard, Meter } from '../../server/quota/meter.ts';
import { startKeyServices, type KeyServices } from '../../server/quota/key-services.ts';
import { sessionMiddleware } from '../../server/auth/session.ts';
import { systemClock, type AppContext, type Clock } from '../../server/context.ts';
import { openDatabase, type Database } from '../../server/db/client.ts';
import { problemErrorHandler } from '../../server/http/error-middleware.ts';
import type { Mailer } from '../../server/mail/mailer.ts';
import { users } from '../../server/db/schema.ts';
import { seedDemo } from '../../server/demo/seed.ts';
import { startMailCapture } from '../../server/mail/capture.ts';
import { createMailer } from '../../server/mail/mailer.ts';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { createTestDatabase, type TestDatabase } from './db.ts';

/** The seeded developer every test file can call the API as (invented, like all demo people). */
export const TEST_DEVELOPER = { email: 'wren.aldous@kestrel-ridge.example', password: 'test-developer-passphrase', displayName: 'Wren Aldous' } as const;
/** Generous enough that no other test file ever meets the quota or the burst limit. */
export const TEST_KEY_LIMITS = { dailyQuota: 1_000_000, burstPerMinute: 100_000 } as const;

/**
 * An app on its own fresh database, with the demo admin, a developer and a key for that developer,
 * and the local mail capture server running. Call `close()` in afterAll.
 */
export async function createTestApp(overrides: Partial<AppConfig> = {}, options: { clock?: Clock } = {}) {
  const database: TestDatabase = await createTestDatabase();
  const config = testConfig({ databaseUrl: database.url, ...overrides });
  const logger = pino({ level: 'silent' });
  const capture = await startMailCapture({ database, logger });
  const mailer = createMailer({ url: capture.url, from: config.mailFrom, logger });

  const seeded = await seedDemo(database.db, config.demoAdmin);
  const [developer] = await database.db
    .insert(users)
    .values({
      organisationId: seeded.organisationId,
      email: TEST_DEVELOPER.email,
      displayName: TEST_DEVELOPER.displayName,
      role: 'developer',
      passwordHash: await hash(TEST_DEVELOPER.password),
    })
    .returning({ id: users.id });
  const developerKey = await createKey(
    database.db,
    {
      organisationId: seeded.organisationId,
      ownerId: developer!.id,
      name: 'test suite',
      note: '',
      ...TEST_KEY_LIMITS,
      actor: { userId: seeded.adminId, label: config.demoAdmin.email },
    },
    new Date(),
  );

  const app = createApp({ database, config, logger, mailer, clock: options.clock });

  /** A supertest agent signed in to the console, sending the session's CSRF token on every request. */
  async function signIn(email: string, password: string): Promise<TestAgent> {
    const agent = request.agent(app);
    const res = await agent.post('/api/v1/session').send({ email, password });
    if (res.status !== 200) throw new Error(`sign-in as ${email} failed with ${res.status}: ${res.text}`);
    agent.set('X-CSRF-Token', res.body.csrfToken as string);
    return agent;
  }

  return {
    app,
    database,
    config,
    mailer,
    /** Headers with a valid Bearer key of the seeded developer (generous quota): `.set(ctx.auth)`. */
    auth: { Authorization: `Bearer ${developerKey.secret}` } as Record<string, string>,
    seed: {
      organisationId: seeded.organisationId,
      adminId: seeded.adminId,
      adminEmail: config.demoAdmin.email,
      developerId: developer!.id,
      developerKeyId: developerKey.key.id,
      developerKey: developerKey.secret,
    },
    signIn,
    /** See settleQuota: the database then shows exactly the units and usage spent so far. */
    settle: () => settleQuota(app),
    adminAgent: () => signIn(config.demoAdmin.email, config.demoAdmin.password),
    developerAgent: () => signIn(TEST_DEVELOPER.email, TEST_DEVELOPER.password),
    close: async () => {
      await app.close();
      mailer.close();
      await capture.close();
      await database.drop();
    },
  };
}

export type TestApp = Awaited<ReturnType<typeof createTestApp>>;

/**
 * Gives back the quota units an app reserved ahead of need and writes its buffered usage
 * (server/quota/key-leases.ts), so that key_quota_days and usage_daily show exactly what was spent.
 */
export async function settleQuota(app: { keyServices: KeyServices }): Promise<void> {
  await app.keyServices.leases.settle();
}

/** An app whose database is unreachable (a closed loopback port), for 503 paths. */
export function createAppWithoutDatabase() {
  const database = openDatabase('postgres://postgres@127.0.0.1:9/unreachable', { max: 1 });
  const app = createApp({ database, config: testConfig() });
  return {
    app,
    close: async () => {
      await app.close();
      await database.close();
    },
  };
}

/** A clock tests can move: `clock.set('2026-03-14T23:59:00Z')`, `clock.advance(ms)`. */
export function manualClock(start: string | Date = '2026-03-14T12:00:00Z') {
  let now = new Date(start);
  return {
    now: () => new Date(now),
    nowMs: () => now.getTime(),
    set(at: string | Date) {
      now = new Date(at);
    },
    advance(ms: number) {
      now = new Date(now.getTime() + ms);
    },
  };
}

/** A metered test app and what it started (see createApp's GammalineApp). */
export type MeteredApp = Express & { readonly keyServices: KeyServices; close(): Promise<void>; settle(): Promise<void> };

/**
 * A clock that runs with real time plus an offset tests can move (`clock.advance(ms)`): time passes as
 * usual for timers and the database, and a test skips ahead instead of waiting.
 */
export function offsetClock(offsetMs = 0) {
  let offset = offsetMs;
  return {
    now: () => new Date(Date.now() + offset),
    nowMs: () => Date.now() + offset,
    advance(ms: number) {
      offset += ms;
    },
  };
}

/**
 * A minimal app with one metered route, `POST /metered` (body `{ units?: number }`), guarded exactly
 * like a calculation route. Tests use it to exercise the meter without depending on the calculations,
 * and to run several "server processes" against one database: each app has its own key services
 * (listener, leases), like a process of its own. `close()` stops them; `settle()` as settleQuota.
 */
export function createMeteredApp(deps: { database: Database; config: AppConfig; mailer?: Mailer; clock?: Clock }): MeteredApp {
  const logger = pino({ level: 'silent' });
  const clock = deps.clock ?? systemClock;
  const keyServices = startKeyServices({ database: deps.database, logger, clock });
  const base = {
    database: deps.database,
    config: deps.config,
    clock,
    logger,
    mailer: deps.mailer ?? { send: async () => {}, close: () => {} },
    keyServices,
  };
  const ctx: AppContext = { ...base, meter: new Meter(base) };
  const app = express();
  app.use(express.json());
  app.use(sessionMiddleware(ctx));
  const units = (req: express.Request) => Number((req.body as { units?: unknown } | undefined)?.units ?? 1);
  app.post('/metered', ...calculationGuard(ctx, 'probe', units), (_req, res) => {
    res.json({ ok: true });
  });
  app.use(problemErrorHandler);
  return Object.assign(app, { keyServices, close: () => keyServices.stop(), settle: () => keyServices.leases.settle() });
}
