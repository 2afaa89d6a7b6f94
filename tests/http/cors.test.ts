import request from 'supertest';
import { pino } from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp, type GammalineApp } from '../../server/app.ts';
import { openDatabase, type Database } from '../../server/db/client.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// Cross-origin calls follow the Fetch standard's CORS protocol (fetch.spec.whatwg.org, "CORS protocol"):
// a preflight OPTIONS with Access-Control-Request-Method, answers carrying Access-Control-Allow-Origin
// with the page's exact origin and `Vary: Origin`, and Access-Control-Expose-Headers for the fields
// beyond the safelisted ones that a page may read.

const LOG_SITE = 'https://log.example.org';
const MONITOR_SITE = 'https://monitor.example.net';
const OTHER_SITE = 'https://elsewhere.example.com';
const MISMATCH = { forwardPowerW: 100, reflectedPowerW: 4 };

let ctx: TestApp;
let admin: Awaited<ReturnType<TestApp['adminAgent']>>;
let developer: Awaited<ReturnType<TestApp['developerAgent']>>;

beforeAll(async () => {
  ctx = await createTestApp();
  admin = await ctx.adminAgent();
  developer = await ctx.developerAgent();
});
afterAll(async () => {
  await ctx.close();
});

async function browserKey(allowedOrigins: string[], limits: { dailyQuota?: number; burstPerMinute?: number } = {}) {
  const res = await admin.post('/api/v1/keys').send({ name: `page of ${allowedOrigins.join(' ') || 'nobody'}`, ownerId: ctx.seed.developerId, allowedOrigins, ...limits }).expect(201);
  return { id: res.body.key.id as string, secret: res.body.secret as string };
}

const fromPage = (app: GammalineApp | TestApp['app'], origin: string, secret: string) =>
  request(app).post('/api/v1/mismatch').set('Origin', origin).set('Authorization', `Bearer ${secret}`).send(MISMATCH);

const preflight = (app: GammalineApp | TestApp['app'], path: string, origin: string, method = 'POST') =>
  request(app).options(path).set('Origin', origin).set('Access-Control-Request-Method', method).set('Access-Control-Request-Headers', 'authorization,content-type');

const corsFields = (headers: Record<string, unknown>) => Object.keys(headers).filter((name) => name.startsWith('access-control-'));

async function usedToday(keyId: string): Promise<number> {
  await ctx.settle();
  const res = await admin.get(`/api/v1/keys/${keyId}`).expect(200);
  return res.body.usedToday as number;
}

describe('preflights', () => {
  it('answer an origin some key allows with the route\'s methods, Authorization and Content-Type, and a max-age, without a key', async () => {
    await browserKey([LOG_SITE]);
    const res = await preflight(ctx.app, '/api/v1/mismatch', LOG_SITE).expect(204);
    expect(res.headers['access-control-allow-origin']).toBe(LOG_SITE);
    expect(res.headers['access-control-allow-methods']).toBe('POST');
    expect(res.headers['access-control-allow-headers']).toBe('Authorization,Content-Type');
    expect(Number(res.headers['access-control-max-age'])).toBeGreaterThan(0);
    expect(res.headers.vary).toMatch(/\bOrigin\b/);
    // Pages never send the console's cookie along.
    expect(res.headers['access-control-allow-credentials']).toBeUndefined();

    const sweep = await preflight(ctx.app, '/api/v1/sweeps/0b6f8d2e-3c1a-4e5f-9a7b-1c2d3e4f5a6b', LOG_SITE, 'PATCH').expect(204);
    expect(sweep.headers['access-control-allow-methods']).toBe('GET,PATCH,DELETE');
  });

  it('refuse an origin no key allows with 403 and no CORS fields', async () => {
    const res = await preflight(ctx.app, '/api/v1/mismatch', OTHER_SITE).expect(403);
    expect(corsFields(res.headers)).toEqual([]);
  });

  it('charge nothing: a key\'s usage is the same after any number of them', async () => {
    const key = await browserKey([MONITOR_SITE]);
    for (let i = 0; i < 5; i++) await preflight(ctx.app, '/api/v1/mismatch', MONITOR_SITE).expect(204);
    expect(await usedToday(key.id)).toBe(0);
  });

  it('are not answered on console routes', async () => {
    for (const path of ['/api/v1/session', '/api/v1/keys', '/api/v1/members', '/api/v1/invitations', '/api/v1/audit']) {
      const res = await preflight(ctx.app, path, LOG_SITE);
      expect(corsFields(res.headers), path).toEqual([]);
    }
  });
});

describe('calls made with a key from a web page', () => {
  it('are served to an origin in the key\'s list, which the page may read with the limit and request-id fields', async () => {
    const key = await browserKey([LOG_SITE, MONITOR_SITE]);
    for (const origin of [LOG_SITE, MONITOR_SITE]) {
      const res = await fromPage(ctx.app, origin, key.secret).expect(200);
      expect(res.body.swr).toBeCloseTo(1.5, 12);
      expect(res.headers['access-control-allow-origin']).toBe(origin);
      expect(res.headers.vary).toMatch(/\bOrigin\b/);
      expect(res.headers['access-control-expose-headers']).toBe('RateLimit,RateLimit-Policy,Retry-After,Request-Id');
      expect(res.headers['access-control-allow-credentials']).toBeUndefined();
      expect(res.headers.ratelimit).toBeDefined();
    }
    expect(await usedToday(key.id)).toBe(2);
  });

  it('are refused with 403 "origin not allowed for this key" from any other origin, spending nothing', async () => {
    const key = await browserKey([LOG_SITE]);
    const res = await fromPage(ctx.app, OTHER_SITE, key.secret).expect(403);
    expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    expect(res.body.detail).toMatch(/origin not allowed for this key/i);
    expect(res.headers['access-control-allow-origin']).toBeUndefined();
    // A key listing no origin serves no page at all.
    await fromPage(ctx.app, LOG_SITE, ctx.seed.developerKey).expect(403);
    expect(await usedToday(key.id)).toBe(0);
  });

  it('keep the CORS fields on a 429, so the page can read Retry-After', async () => {
    const key = await browserKey([LOG_SITE], { burstPerMinute: 1 });
    await fromPage(ctx.app, LOG_SITE, key.secret).expect(200);
    const res = await fromPage(ctx.app, LOG_SITE, key.secret).expect(429);
    expect(res.headers['access-control-allow-origin']).toBe(LOG_SITE);
    expect(res.headers['retry-after']).toBeDefined();
  });

  it('leave requests without Origin (servers, programs) exactly as before', async () => {
    const key = await browserKey([LOG_SITE]);
    const res = await request(ctx.app).post('/api/v1/mismatch').set('Authorization', `Bearer ${key.secret}`).send(MISMATCH).expect(200);
    expect(corsFields(res.headers)).toEqual([]);
    expect(res.headers.vary ?? '').not.toMatch(/Origin/);
    await request(ctx.app).post('/api/v1/mismatch').set(ctx.auth).send(MISMATCH).expect(200);
  });

  it('treat the server\'s own pages as same-origin: no check, no CORS fields', async () => {
    const res = await request(ctx.app).post('/api/v1/mismatch').set(ctx.auth).set('Origin', OTHER_SITE).set('Sec-Fetch-Site', 'same-origin').send(MISMATCH).expect(200);
    expect(corsFields(res.headers)).toEqual([]);
  });
});

describe('console and session routes', () => {
  it('never carry CORS fields, whatever the Origin', async () => {
    await browserKey([LOG_SITE]);
    const answers = [
      await developer.get('/api/v1/session').set('Origin', LOG_SITE),
      await developer.get('/api/v1/keys').set('Origin', LOG_SITE),
      await developer.post('/api/v1/keys').set('Origin', LOG_SITE).send({ name: 'from elsewhere' }),
      await admin.get('/api/v1/members').set('Origin', LOG_SITE),
      await admin.get('/api/v1/audit').set('Origin', LOG_SITE),
      await request(ctx.app).post('/api/v1/session').set('Origin', LOG_SITE).send({ email: 'nobody@example.org', password: 'wrong password here' }),
      // A console session on a calculation route is the console's own call, not a key's.
      await developer.post('/api/v1/mismatch').set('Origin', LOG_SITE).send(MISMATCH),
    ];
    for (const res of answers) expect(corsFields(res.headers), `${res.status} ${res.text.slice(0, 80)}`).toEqual([]);
  });
});

describe('a changed origin list', () => {
  const instances: { database: Database; app: GammalineApp }[] = [];

  beforeAll(async () => {
    for (let i = 0; i < 2; i++) {
      const database = openDatabase(ctx.database.url, { max: 4 });
      const app = createApp({ database, config: ctx.config, logger: pino({ level: 'silent' }) });
      instances.push({ database, app });
      const started = Date.now();
      while (!app.keyServices.listener.healthy) {
        if (Date.now() - started > 5_000) throw new Error('key-change listener did not connect');
        await new Promise((r) => setTimeout(r, 10));
      }
    }
  });
  afterAll(async () => {
    for (const { app, database } of instances) {
      await app.close();
      await database.close();
    }
  });

  async function within(ms: number, check: () => Promise<boolean>): Promise<number> {
    const started = Date.now();
    while (!(await check())) {
      if (Date.now() - started > ms) throw new Error(`not within ${ms} ms`);
      await new Promise((r) => setTimeout(r, 10));
    }
    return Date.now() - started;
  }

  it('applies on every instance within a second, as a revocation does, for calls and preflights', async () => {
    const key = await browserKey([LOG_SITE]);
    for (const { app } of instances) {
      await fromPage(app, LOG_SITE, key.secret).expect(200);
      await preflight(app, '/api/v1/mismatch', LOG_SITE).expect(204);
      await preflight(app, '/api/v1/mismatch', 'https://moved.example.org').expect(403);
    }

    // Changed through a third app, as the console on another server would.
    await developer.patch(`/api/v1/keys/${key.id}`).send({ allowedOrigins: ['https://moved.example.org'] }).expect(200);
    for (const { app } of instances) {
      const tookMs = await within(1_000, async () => (await fromPage(app, LOG_SITE, key.secret)).status === 403);
      expect(tookMs).toBeLessThan(1_000);
      await within(1_000, async () => (await fromPage(app, 'https://moved.example.org', key.secret)).status === 200);
      await within(1_000, async () => (await preflight(app, '/api/v1/mismatch', 'https://moved.example.org')).status === 204);
    }

    // A new key's origins are announced too, although new keys are not changes.
    await browserKey(['https://new.example.org']);
    for (const { app } of instances) await within(1_000, async () => (await preflight(app, '/api/v1/mismatch', 'https://new.example.org')).status === 204);

    // Revoking the key takes its origin out of the preflights everywhere.
    await developer.delete(`/api/v1/keys/${key.id}`).expect(200);
    for (const { app } of instances) await within(1_000, async () => (await preflight(app, '/api/v1/mismatch', 'https://moved.example.org')).status === 403);
  });
});
