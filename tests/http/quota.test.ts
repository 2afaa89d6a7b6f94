import { sql } from 'drizzle-orm';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { pruneRateLimitHits } from '../../server/quota/pg-rate-limit-store.ts';
import { createMeteredApp, createTestApp, manualClock, type TestApp } from '../helpers/app.ts';

// Header fields: IETF draft-ietf-httpapi-ratelimit-headers (RateLimit-Policy / RateLimit, as written by
// express-rate-limit's draft-8 mode); 429 and Retry-After: RFC 6585 §4 and RFC 9110 §10.2.3;
// error bodies: RFC 9457.

let ctx: TestApp;
let metered: ReturnType<typeof createMeteredApp>;
let admin: Awaited<ReturnType<TestApp['adminAgent']>>;
// 18:00 UTC: 6 hours (21 600 s) before the quota day ends.
const clock = manualClock('2026-03-14T18:00:00Z');

beforeAll(async () => {
  ctx = await createTestApp({}, { clock });
  metered = createMeteredApp({ database: ctx.database, config: ctx.config, mailer: ctx.mailer, clock });
  admin = await ctx.adminAgent();
});
afterAll(async () => {
  await metered.close();
  await ctx.close();
});

/** Both apps (the metered probe and the test app) give reserved units back and write their usage. */
const settle = () => Promise.all([metered.settle(), ctx.settle()]);

async function newKey(limits: { dailyQuota?: number; burstPerMinute?: number }, name = 'probe') {
  const res = await admin.post('/api/v1/keys').send({ name, ownerId: ctx.seed.developerId, ...limits }).expect(201);
  return { id: res.body.key.id as string, bearer: { Authorization: `Bearer ${res.body.secret}` } };
}

const call = (bearer: Record<string, string>, units?: number) => request(metered).post('/metered').set(bearer).send(units === undefined ? {} : { units });

async function mailTo(address: string, subject: RegExp, expected: number) {
  // Quota warnings are sent after the response; give them a moment to arrive.
  for (let i = 0; i < 50; i++) {
    const res = await admin.get(`/api/v1/mail?to=${encodeURIComponent(address)}`).expect(200);
    const hits = res.body.messages.filter((m: { subject: string }) => subject.test(m.subject));
    if (hits.length >= expected) return hits;
    await new Promise((r) => setTimeout(r, 50));
  }
  const res = await admin.get(`/api/v1/mail?to=${encodeURIComponent(address)}`).expect(200);
  return res.body.messages.filter((m: { subject: string }) => subject.test(m.subject));
}

describe('the daily quota', () => {
  it('admits exactly the quota, then answers 429 with Retry-After until midnight UTC', async () => {
    const key = await newKey({ dailyQuota: 5 });
    for (let i = 1; i <= 5; i++) {
      const res = await call(key.bearer).expect(200);
      expect(res.headers.ratelimit).toContain(`"daily"; r=${5 - i}; t=21600`);
    }
    const refused = await call(key.bearer).expect(429);
    expect(refused.headers['content-type']).toMatch(/application\/problem\+json/);
    expect(refused.headers['retry-after']).toBe('21600');
    expect(refused.body).toMatchObject({ status: 429, type: 'urn:gammaline:problem:too-many-requests' });
    expect(refused.body.detail).toMatch(/5 calculation units for 2026-03-14 \(UTC\).*00:00 UTC, in 21600 s; an admin can raise it/);
    expect(refused.headers.ratelimit).toContain('"daily"; r=0; t=21600');
  });

  it('sends both IETF header fields, one item per limit', async () => {
    const key = await newKey({ dailyQuota: 100, burstPerMinute: 10 });
    const res = await call(key.bearer).expect(200);
    expect(res.headers['ratelimit-policy']).toMatch(/^"burst"; q=10; w=60; pk=:[^:]+:, "daily"; q=100; w=86400$/);
    expect(res.headers.ratelimit).toMatch(/^"burst"; r=9; t=\d+, "daily"; r=99; t=21600$/);
  });

  it('refuses a multi-unit request whole when its units do not fit, and admits one that fits exactly', async () => {
    const key = await newKey({ dailyQuota: 5 });
    await call(key.bearer, 3).expect(200);
    const refused = await call(key.bearer, 3).expect(429);
    expect(refused.body.detail).toMatch(/needs 3 units and 2 remain/);
    await call(key.bearer, 2).expect(200);
    await settle();
    const used = await ctx.database.db.execute(sql`select used from key_quota_days where key_id = ${key.id}::uuid`);
    expect(used.rows[0]).toEqual({ used: 5 });
  });

  it('refuses a request larger than the whole quota', async () => {
    const key = await newKey({ dailyQuota: 5 });
    await call(key.bearer, 6).expect(429);
    await call(key.bearer, 5).expect(200);
  });

  it('starts again on the next UTC day', async () => {
    const key = await newKey({ dailyQuota: 1 });
    await call(key.bearer).expect(200);
    await call(key.bearer).expect(429);
    clock.set('2026-03-15T00:00:01Z');
    try {
      const res = await call(key.bearer).expect(200);
      expect(res.headers.ratelimit).toContain('"daily"; r=0; t=86399');
    } finally {
      clock.set('2026-03-14T18:00:00Z');
    }
  });

  it('takes a raised quota into account on the next request', async () => {
    const key = await newKey({ dailyQuota: 1 });
    await call(key.bearer).expect(200);
    await call(key.bearer).expect(429);
    await admin.patch(`/api/v1/keys/${key.id}`).send({ dailyQuota: 2 }).expect(200);
    await call(key.bearer).expect(200);
  });
});

describe('the per-minute burst limit', () => {
  it('answers the request after the limit with 429, Retry-After within the minute and r=0', async () => {
    const key = await newKey({ dailyQuota: 100, burstPerMinute: 3 });
    for (let i = 0; i < 3; i++) await call(key.bearer).expect(200);
    const refused = await call(key.bearer).expect(429);
    const retryAfter = Number(refused.headers['retry-after']);
    expect(retryAfter).toBeGreaterThanOrEqual(1);
    expect(retryAfter).toBeLessThanOrEqual(60);
    expect(refused.headers.ratelimit).toMatch(/"burst"; r=0; t=\d+/);
    expect(refused.body.detail).toMatch(/More than 3 requests in a minute/);
    // A burst refusal spends no daily units.
    await settle();
    const used = await ctx.database.db.execute(sql`select used from key_quota_days where key_id = ${key.id}::uuid`);
    expect(used.rows[0]).toEqual({ used: 3 });
  });

  it('counts each key separately', async () => {
    const a = await newKey({ burstPerMinute: 1 });
    const b = await newKey({ burstPerMinute: 1 });
    await call(a.bearer).expect(200);
    await call(a.bearer).expect(429);
    await call(b.bearer).expect(200);
  });
});

describe('usage is recorded per key, endpoint and day', () => {
  it('adds units and requests to the key\'s row for the endpoint', async () => {
    const key = await newKey({ dailyQuota: 100 });
    await call(key.bearer, 4).expect(200);
    await call(key.bearer, 1).expect(200);
    await settle();
    const rows = await ctx.database.db.execute(sql`select endpoint, to_char(day, 'YYYY-MM-DD') as day, units, requests from usage_daily where key_id = ${key.id}::uuid`);
    expect(rows.rows).toEqual([{ endpoint: 'probe', day: '2026-03-14', units: 5, requests: 2 }]);
  });

  it('counts console (session) calls as the member\'s own usage without spending a key quota', async () => {
    const signIn = await request(ctx.app).post('/api/v1/session').send({ email: ctx.seed.adminEmail, password: ctx.config.demoAdmin.password }).expect(200);
    const cookie = signIn.headers['set-cookie'] as unknown as string[];
    const res = await request(metered).post('/metered').set('Cookie', cookie).set('X-CSRF-Token', signIn.body.csrfToken).send({ units: 2 }).expect(200);
    expect(res.headers['ratelimit-policy']).toMatch(/^"burst"; q=120; w=60/);
    expect(res.headers['ratelimit-policy']).not.toContain('daily');
    await settle();
    const rows = await ctx.database.db.execute(sql`select user_id, units, requests from usage_daily where key_id is null`);
    expect(rows.rows).toEqual([{ user_id: ctx.seed.adminId, units: 2, requests: 1 }]);
    // A console write without the CSRF token is refused before anything is counted.
    await request(metered).post('/metered').set('Cookie', cookie).send({}).expect(403);
  });
});

describe('GET /api/v1/usage', () => {
  it('gives a developer (or their key) their own daily series, zero days included', async () => {
    const res = await request(ctx.app).get('/api/v1/usage?from=2026-03-12&to=2026-03-14').set(ctx.auth).expect(200);
    expect(res.body.scope).toBe('own');
    expect(res.body.days.map((d: { day: string }) => d.day)).toEqual(['2026-03-12', '2026-03-13', '2026-03-14']);
    expect(res.body.days[0]).toEqual({ day: '2026-03-12', units: 0, requests: 0 });
    expect(res.body.totalUnits).toBeGreaterThan(0);
    expect(res.body.byEndpoint).toEqual([expect.objectContaining({ endpoint: 'probe' })]);
    expect(res.body.byKey.every((k: { userId: string }) => k.userId === ctx.seed.developerId)).toBe(true);
  });

  it('gives an admin the organisation, console calls included, and one member on request', async () => {
    const all = await admin.get('/api/v1/usage?from=2026-03-14&to=2026-03-14').expect(200);
    expect(all.body.scope).toBe('organisation');
    expect(all.body.byKey).toContainEqual(expect.objectContaining({ keyId: null, userId: ctx.seed.adminId, units: 2 }));
    const one = await admin.get(`/api/v1/usage?from=2026-03-14&to=2026-03-14&userId=${ctx.seed.developerId}`).expect(200);
    expect(one.body.totalUnits).toBe(all.body.totalUnits - 2);
  });

  it('refuses another member\'s usage to a developer (403) and a reversed or too long range (422)', async () => {
    const dev = await ctx.developerAgent();
    await dev.get(`/api/v1/usage?userId=${ctx.seed.adminId}`).expect(403);
    const reversed = await dev.get('/api/v1/usage?from=2026-03-14&to=2026-03-01').expect(422);
    expect(reversed.body.errors[0].field).toBe('from');
    await dev.get('/api/v1/usage?from=2024-01-01&to=2026-03-01').expect(422);
    const bad = await dev.get('/api/v1/usage?from=yesterday').expect(400);
    expect(bad.body.detail).toMatch(/2026-03-14/);
  });
});

describe('quota e-mails', () => {
  it('tells the owner once at 80 % and once at 100 % of the daily quota', async () => {
    const key = await newKey({ dailyQuota: 5 }, 'warned key');
    await ctx.database.db.execute(sql`delete from captured_mail`);
    for (let i = 0; i < 4; i++) await call(key.bearer).expect(200);
    const at80 = await mailTo('wren.aldous@kestrel-ridge.example', /used 80 %/, 1);
    expect(at80).toHaveLength(1);
    await call(key.bearer).expect(200);
    await call(key.bearer).expect(429);
    await call(key.bearer).expect(429);
    const at100 = await mailTo('wren.aldous@kestrel-ridge.example', /whole daily quota/, 1);
    expect(at100).toHaveLength(1);
    const message = await admin.get(`/api/v1/mail/${at100[0].id}`).expect(200);
    expect(message.body.text).toContain('spent 5 of its 5 calculation units for 2026-03-14');
    await new Promise((r) => setTimeout(r, 200));
    expect(await mailTo('wren.aldous@kestrel-ridge.example', /warned key/, 2)).toHaveLength(2);
  });
});

describe('rate-limit windows', () => {
  it('are pruned an hour after they end, and live windows are kept', async () => {
    await ctx.database.db.execute(sql`insert into rate_limit_hits (key, hits, reset_at) values ('test:old', 3, now() - interval '2 hours'), ('test:live', 1, now() + interval '1 minute')`);
    expect(await pruneRateLimitHits(ctx.database.pool)).toBeGreaterThanOrEqual(1);
    const left = await ctx.database.db.execute(sql`select key from rate_limit_hits where key like 'test:%'`);
    expect(left.rows).toEqual([{ key: 'test:live' }]);
  });
});
