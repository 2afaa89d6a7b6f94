import { Writable } from 'node:stream';
import { eq } from 'drizzle-orm';
import { pino } from 'pino';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../server/app.ts';
import { testConfig } from '../../server/config.ts';
import { apiKeys, users } from '../../server/db/schema.ts';
import { openApiDocument } from '../../server/openapi/document.ts';
import { createTestApp, TEST_DEVELOPER, type TestApp } from '../helpers/app.ts';

// Security properties that tests/http/session.test.ts and tests/http/roles.test.ts do not already
// prove: fixation across an existing session, CSRF on every cookie-authenticated write of the
// OpenAPI document, secrets absent from responses and logs, and security headers on every surface.

let ctx: TestApp;
let logLines: string[];
/** The same database and mail, with a logger that keeps every line at trace level. */
let logged: ReturnType<typeof createApp>;

beforeAll(async () => {
  ctx = await createTestApp();
  logLines = [];
  const sink = new Writable({
    write(chunk: Buffer, _enc, done) {
      logLines.push(chunk.toString('utf8'));
      done();
    },
  });
  logged = createApp({ database: ctx.database, config: ctx.config, mailer: ctx.mailer, logger: pino({ level: 'trace' }, sink) });
});
afterAll(async () => {
  await logged?.close();
  await ctx?.close();
});

const cookieOf = (res: request.Response) => res.headers['set-cookie']?.[0]?.split(';')[0];

describe('session fixation (OWASP Session Management Cheat Sheet)', () => {
  it('gives a new session id when someone signs in over an existing session, and the old id stops working', async () => {
    const first = await request(ctx.app).post('/api/v1/session').send({ email: TEST_DEVELOPER.email, password: TEST_DEVELOPER.password }).expect(200);
    const planted = cookieOf(first)!;
    // Whoever knew the planted id (a shared machine, a fixation attempt) must not ride the admin's sign-in.
    const second = await request(ctx.app).post('/api/v1/session').set('Cookie', planted).send({ email: ctx.config.demoAdmin.email, password: ctx.config.demoAdmin.password }).expect(200);
    const fresh = cookieOf(second)!;
    expect(fresh).not.toBe(planted);
    await request(ctx.app).get('/api/v1/session').set('Cookie', planted).expect(401);
    const me = await request(ctx.app).get('/api/v1/session').set('Cookie', fresh).expect(200);
    expect(me.body.member?.email ?? me.body.email).toBe(ctx.config.demoAdmin.email);
  });

  it('ignores a session id the server never issued, and a tampered signature', async () => {
    const signedIn = cookieOf(await request(ctx.app).post('/api/v1/session').send({ email: TEST_DEVELOPER.email, password: TEST_DEVELOPER.password }).expect(200))!;
    for (const forged of ['gammaline.sid=attacker-chosen-id', 'gammaline.sid=s%3Aattacker-chosen-id.c2lnbmF0dXJl', `${signedIn.slice(0, -3)}abc`]) {
      const res = await request(ctx.app).get('/api/v1/session').set('Cookie', forged);
      expect(res.status, forged).toBe(401);
      expect(res.headers['set-cookie']).toBeUndefined();
    }
  });

  it('issues no session cookie to anonymous callers, so there is no pre-sign-in id to plant', async () => {
    for (const path of ['/api/v1/openapi.json', '/api/v1/session', '/api/v1/cables', '/healthz']) {
      expect((await request(ctx.app).get(path)).headers['set-cookie'], path).toBeUndefined();
    }
  });
});

describe('CSRF on cookie-authenticated writes (OWASP CSRF Prevention Cheat Sheet, synchronizer token)', () => {
  type Op = { method: string; path: string };
  const writes: Op[] = [];
  for (const [path, item] of Object.entries(openApiDocument().paths as Record<string, Record<string, { security?: Record<string, unknown>[] }>>)) {
    for (const [method, op] of Object.entries(item)) {
      const viaCookie = (op.security ?? []).some((s) => 'consoleSession' in s);
      if (viaCookie && !['get', 'head', 'options'].includes(method)) writes.push({ method, path });
    }
  }

  it('finds every cookie-authenticated write in the OpenAPI document', () => {
    expect(writes.length).toBeGreaterThanOrEqual(15);
  });

  it.each(writes)('refuses $method $path with a session cookie but no X-CSRF-Token (403 problem, nothing changed)', async ({ method, path }) => {
    const agent = await ctx.adminAgent();
    const auditBefore = (await agent.get('/api/v1/audit').expect(200)).body;
    const url = path.replace('{id}', '00000000-0000-4000-8000-000000000000');
    const res = await (agent as unknown as Record<string, (u: string) => request.Test>)[method]!(url).set('X-CSRF-Token', '').send({});
    expect(res.status, res.text).toBe(403);
    expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
    expect(res.body.detail).toMatch(/X-CSRF-Token/);
    expect((await agent.get('/api/v1/audit').expect(200)).body).toEqual(auditBefore);
  });
});

/** Every string a response must never contain. */
const SECRET_MARKERS = ['keyHash', 'key_hash', 'passwordHash', 'password_hash', 'tokenHash', 'token_hash', '$argon2'];

describe('secret hashes never leave the server', () => {
  it('appear in no JSON answer of the main routes, as any caller', async () => {
    const admin = await ctx.adminAgent();
    const developer = await ctx.developerAgent();
    const created = await admin.post('/api/v1/keys').send({ name: 'hash probe' }).expect(201);
    await admin.post('/api/v1/invitations').send({ email: 'ember.quayle@kestrel-ridge.example' }).expect(201);
    const storedHashes = (await ctx.database.db.select({ h: apiKeys.keyHash }).from(apiKeys)).map((r) => Buffer.isBuffer(r.h) ? r.h.toString('hex') : String(r.h));
    const passwordHashes = (await ctx.database.db.select({ h: users.passwordHash }).from(users).where(eq(users.organisationId, ctx.seed.organisationId))).flatMap((r) => (r.h ? [r.h] : []));
    expect(storedHashes.length).toBeGreaterThan(0);

    const bodies: { what: string; text: string }[] = [{ what: 'POST /api/v1/keys', text: created.text }];
    const paths = Object.entries(openApiDocument().paths as Record<string, Record<string, unknown>>)
      .filter(([p, item]) => 'get' in item && !p.includes('{'))
      .map(([p]) => p);
    const ids: Record<string, string> = { '/api/v1/keys/{id}': created.body.key.id, '/api/v1/members/{id}': ctx.seed.developerId };
    for (const [p, id] of Object.entries(ids)) paths.push(p.replace('{id}', id));
    for (const [who, agent] of [['admin', admin], ['developer', developer]] as const) {
      for (const p of paths) {
        const res = await agent.get(p);
        bodies.push({ what: `GET ${p} as ${who}`, text: res.text });
      }
    }
    for (const p of paths) bodies.push({ what: `GET ${p} with a key`, text: (await request(ctx.app).get(p).set(ctx.auth)).text });
    const signIn = await request(ctx.app).post('/api/v1/session').send({ email: TEST_DEVELOPER.email, password: TEST_DEVELOPER.password });
    bodies.push({ what: 'POST /api/v1/session', text: signIn.text });

    expect(bodies.length).toBeGreaterThan(40);
    for (const { what, text } of bodies) {
      for (const marker of [...SECRET_MARKERS, ...storedHashes, ...passwordHashes]) expect(text.includes(marker), `${what} contains ${marker.slice(0, 12)}…`).toBe(false);
    }
  });
});

describe('keys and passwords never reach the logs', () => {
  it('logs no key, password, CSRF token or session id across sign-in, key calls, failures and key creation', async () => {
    const password = ctx.config.demoAdmin.password;
    const app = request(logged);
    const session = await app.post('/api/v1/session').send({ email: ctx.config.demoAdmin.email, password }).expect(200);
    const cookie = cookieOf(session)!;
    const csrf = session.body.csrfToken as string;
    await app.post('/api/v1/session').send({ email: TEST_DEVELOPER.email, password: 'a-wrong-passphrase-to-log' }).expect(401);
    const minted = await app.post('/api/v1/keys').set('Cookie', cookie).set('X-CSRF-Token', csrf).send({ name: 'log probe' }).expect(201);
    const secret = minted.body.secret as string;
    expect(secret).toBeTypeOf('string');
    await app.post('/api/v1/mismatch').set('Authorization', `Bearer ${secret}`).send({ swr: 1.5 }).expect(200);
    await app.post('/api/v1/mismatch').set('Authorization', `Bearer ${secret}x`).send({ swr: 1.5 }).expect(401);
    await app.post('/api/v1/mismatch').set('Authorization', `Bearer ${secret}`).send({ swr: 'not a number', password }).expect(400);
    await app.post('/api/v1/mismatch').set('Authorization', `Bearer ${secret}`).set('Content-Type', 'application/json').send(`{"broken": "${password}`).expect(400);
    await app.post('/api/v1/password-reset/confirm').send({ token: 'not-a-real-token-value', password: 'a-brand-new-passphrase' }).expect((r) => expect(r.status).toBeGreaterThanOrEqual(400));

    const text = logLines.join('');
    expect(logLines.length).toBeGreaterThan(5);
    for (const leaked of [secret, secret.slice(-16), password, 'a-wrong-passphrase-to-log', 'a-brand-new-passphrase', csrf, cookie.split('=')[1]!]) {
      const line = logLines.find((l) => l.includes(leaked));
      expect(line, `the log holds ${leaked.slice(0, 6)}…`).toBeUndefined();
    }
    // The refused key is still visible to operators as an outcome, not as a value.
    expect(text).toMatch(/key refused/);
  });
});

describe('security headers on every surface', () => {
  // API answers get the OWASP REST Security Cheat Sheet's set (from memory: no-store, frame-ancestors
  // 'none', nosniff, X-Frame-Options DENY, HSTS) plus default-src 'none' and a same-origin resource
  // policy; pages get helmet's document set.
  const api = [
    { what: 'an API answer', path: '/api/v1/cables', auth: true },
    { what: 'an API problem', path: '/api/v1/mismatch', auth: false },
    { what: 'the OpenAPI document', path: '/api/v1/openapi.json', auth: false },
    { what: 'an unknown API path', path: '/api/v2/nothing', auth: false },
    { what: 'an API path in capitals (Express routes it)', path: '/API/v1/openapi.json', auth: false },
    { what: 'the health check', path: '/healthz', auth: false },
  ];
  const pages = [
    { what: 'the API reference', path: '/docs/' },
    { what: 'the console', path: '/' },
  ];

  it.each(api)('API set with $what ($path)', async ({ path, auth }) => {
    let req = request(ctx.app).get(path).set('Accept', 'application/json');
    if (auth) req = req.set(ctx.auth);
    const res = await req;
    expect(res.status, res.text.slice(0, 200)).toBeLessThan(500);
    expect(res.headers['cache-control']).toBe('no-store');
    expect(res.headers['content-security-policy']).toBe("default-src 'none'; frame-ancestors 'none'");
    expect(res.headers['x-content-type-options']).toBe('nosniff');
    expect(res.headers['x-frame-options']).toBe('DENY');
    expect(res.headers['cross-origin-resource-policy']).toBe('same-origin');
    expect(res.headers['x-powered-by']).toBeUndefined();
    // Document-only headers stay off JSON answers.
    expect(res.headers['cross-origin-opener-policy']).toBeUndefined();
    expect(res.headers['x-dns-prefetch-control']).toBeUndefined();
  });

  it.each(pages)("helmet's document set with $what ($path)", async ({ path }) => {
    const res = await request(ctx.app).get(path).set('Accept', 'text/html,application/json');
    expect(res.status, res.text.slice(0, 200)).toBeLessThan(500);
    expect(res.headers['content-security-policy']).toMatch(/default-src 'self'/);
    expect(res.headers['x-content-type-options']).toBe('nosniff');
    expect(res.headers['x-frame-options']).toBe('SAMEORIGIN');
    expect(res.headers['referrer-policy']).toBe('no-referrer');
    expect(res.headers['cross-origin-opener-policy']).toBe('same-origin');
    expect(res.headers['x-powered-by']).toBeUndefined();
  });

  it('adds Strict-Transport-Security in production and leaves it out on local plain HTTP', async () => {
    const production = createApp({ database: ctx.database, config: testConfig({ ...ctx.config, mode: 'production' }), logger: pino({ level: 'silent' }) });
    try {
      for (const path of ['/healthz', '/api/v1/openapi.json']) {
        expect((await request(production).get(path)).headers['strict-transport-security'], path).toBe('max-age=31536000; includeSubDomains');
        expect((await request(ctx.app).get(path)).headers['strict-transport-security'], path).toBeUndefined();
      }
    } finally {
      await production.close();
    }
  });
});
