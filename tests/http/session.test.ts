import { sql } from 'drizzle-orm';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { hashPassword } from '../../server/auth/password.ts';
import { users } from '../../server/db/schema.ts';
import { SIGN_IN_FAILURES_PER_ACCOUNT, SIGN_IN_FAILURES_PER_ADDRESS } from '../../server/auth/throttle.ts';
import { createTestApp, TEST_DEVELOPER, type TestApp } from '../helpers/app.ts';

// Cookie flags, session id renewal and server-side session ending: OWASP session management cheat sheet.
// Synchronizer CSRF tokens: OWASP cross-site request forgery prevention cheat sheet.
// Throttling sign-in per account and per address: OWASP authentication cheat sheet.

let ctx: TestApp;
beforeAll(async () => {
  ctx = await createTestApp();
});
afterAll(async () => {
  await ctx.close();
});

const signIn = (email: string, password: string) => request(ctx.app).post('/api/v1/session').send({ email, password });
const sessionRows = async () => Number((await ctx.database.db.execute<{ n: number }>(sql`select count(*)::int as n from user_sessions`)).rows[0]!.n);

describe('signing in', () => {
  it('answers the member, the organisation and a CSRF token, and sets an httpOnly SameSite=Lax cookie', async () => {
    const res = await signIn(ctx.seed.adminEmail, ctx.config.demoAdmin.password).expect(200);
    expect(res.body.member).toMatchObject({ email: ctx.seed.adminEmail, role: 'admin', disabled: false });
    expect(res.body.organisation).toMatchObject({ name: 'Kestrel Ridge Radio Club', slug: 'kestrel-ridge' });
    expect(res.body.csrfToken).toMatch(/^[A-Za-z0-9_-]{43}$/);
    expect(JSON.stringify(res.body)).not.toMatch(/password/i);
    const cookie = (res.headers['set-cookie'] as unknown as string[])[0]!;
    expect(cookie).toMatch(/^gammaline\.sid=/);
    expect(cookie).toMatch(/; HttpOnly/);
    expect(cookie).toMatch(/; SameSite=Lax/);
    expect(cookie).not.toMatch(/; Secure/);
  });

  it('accepts the address in any letter case', async () => {
    await signIn(TEST_DEVELOPER.email.toUpperCase(), TEST_DEVELOPER.password).expect(200);
  });

  it('keeps sessions in PostgreSQL and issues a new session id at every sign-in', async () => {
    const before = await sessionRows();
    const a = await signIn(TEST_DEVELOPER.email, TEST_DEVELOPER.password).expect(200);
    const b = await signIn(TEST_DEVELOPER.email, TEST_DEVELOPER.password).expect(200);
    expect(await sessionRows()).toBe(before + 2);
    expect(a.headers['set-cookie']![0]!.split(';')[0]).not.toBe(b.headers['set-cookie']![0]!.split(';')[0]);
  });

  it('answers a wrong password and an unknown address with the same 401', async () => {
    const wrong = await signIn(TEST_DEVELOPER.email, 'not the password at all').expect(401);
    const unknown = await signIn('nobody@kestrel-ridge.example', 'not the password at all').expect(401);
    expect(wrong.body.detail).toBe(unknown.body.detail);
    expect(wrong.body.detail).toMatch(/password-reset/);
    expect(wrong.headers['set-cookie']).toBeUndefined();
  });

  it('answers a malformed body with a 400 field list', async () => {
    const res = await request(ctx.app).post('/api/v1/session').send({ email: 'not an address' }).expect(400);
    expect(res.body.errors.map((e: { field: string }) => e.field).sort()).toEqual(['email', 'password']);
  });
});

describe('who am I and signing out', () => {
  it('tells the signed-in member who they are, and 401 without a session', async () => {
    const agent = await ctx.developerAgent();
    const me = await agent.get('/api/v1/session').expect(200);
    expect(me.body.member.email).toBe(TEST_DEVELOPER.email);
    await request(ctx.app).get('/api/v1/session').expect(401);
  });

  it('ends the session on the server and clears the cookie', async () => {
    const agent = await ctx.developerAgent();
    const before = await sessionRows();
    const res = await agent.delete('/api/v1/session').expect(204);
    expect(res.headers['set-cookie']![0]).toMatch(/gammaline\.sid=;/);
    expect(await sessionRows()).toBe(before - 1);
    await agent.get('/api/v1/session').expect(401);
  });

  it('refuses a key on console-only routes', async () => {
    const res = await request(ctx.app).get('/api/v1/session').set(ctx.auth).expect(403);
    expect(res.body.detail).toMatch(/session cookie/);
  });
});

describe('CSRF protection of console writes', () => {
  it('refuses a cookie-authenticated write without the X-CSRF-Token header', async () => {
    const agent = request.agent(ctx.app);
    await agent.post('/api/v1/session').send({ email: TEST_DEVELOPER.email, password: TEST_DEVELOPER.password }).expect(200);
    const res = await agent.post('/api/v1/keys').send({ name: 'forged' }).expect(403);
    expect(res.body.detail).toMatch(/X-CSRF-Token/);
    await agent.delete('/api/v1/session').expect(403);
  });

  it('refuses a wrong token and another session\'s token', async () => {
    const agent = request.agent(ctx.app);
    await agent.post('/api/v1/session').send({ email: TEST_DEVELOPER.email, password: TEST_DEVELOPER.password }).expect(200);
    const other = await signIn(TEST_DEVELOPER.email, TEST_DEVELOPER.password).expect(200);
    await agent.post('/api/v1/keys').set('X-CSRF-Token', 'x'.repeat(43)).send({ name: 'forged' }).expect(403);
    await agent.post('/api/v1/keys').set('X-CSRF-Token', other.body.csrfToken).send({ name: 'forged' }).expect(403);
  });

  it('lets reads through without a token, and writes with the session\'s token', async () => {
    const agent = request.agent(ctx.app);
    const session = await agent.post('/api/v1/session').send({ email: TEST_DEVELOPER.email, password: TEST_DEVELOPER.password }).expect(200);
    await agent.get('/api/v1/keys').expect(200);
    const me = await agent.get('/api/v1/session').expect(200);
    expect(me.body.csrfToken).toBe(session.body.csrfToken);
    await agent.post('/api/v1/keys').set('X-CSRF-Token', session.body.csrfToken).send({ name: 'genuine' }).expect(201);
  });

  it('needs no token for Bearer-key calls, which browsers never send on their own', async () => {
    await request(ctx.app).get('/api/v1/usage').set(ctx.auth).expect(200);
  });
});

describe('a disabled member', () => {
  it('loses the open session, cannot sign in, and their keys stop working until enabled again', async () => {
    const admin = await ctx.adminAgent();
    const dev = await ctx.developerAgent();
    await request(ctx.app).get('/api/v1/usage').set(ctx.auth).expect(200);

    const disabled = await admin.patch(`/api/v1/members/${ctx.seed.developerId}`).send({ disabled: true }).expect(200);
    expect(disabled.body.disabled).toBe(true);
    await dev.get('/api/v1/session').expect(401);
    await signIn(TEST_DEVELOPER.email, TEST_DEVELOPER.password).expect(401);
    await request(ctx.app).get('/api/v1/usage').set(ctx.auth).expect(401);
    const keys = await admin.get(`/api/v1/keys?ownerId=${ctx.seed.developerId}`).expect(200);
    expect(keys.body.keys[0].state).toBe('owner-disabled');

    await admin.patch(`/api/v1/members/${ctx.seed.developerId}`).send({ disabled: false }).expect(200);
    await request(ctx.app).get('/api/v1/usage').set(ctx.auth).expect(200);
    await signIn(TEST_DEVELOPER.email, TEST_DEVELOPER.password).expect(200);

    const audit = await admin.get('/api/v1/audit').expect(200);
    expect(audit.body.events.map((e: { action: string }) => e.action)).toEqual(expect.arrayContaining(['member.disabled', 'member.enabled']));
  });
});

describe('throttling of failed sign-ins', () => {
  it(`locks an account for a while after ${SIGN_IN_FAILURES_PER_ACCOUNT} failures, even for the right password`, async () => {
    const email = 'brook.haldane@kestrel-ridge.example';
    const password = 'brook-knows-this-one';
    await ctx.database.db.insert(users).values({ organisationId: ctx.seed.organisationId, email, displayName: 'Brook Haldane', passwordHash: await hashPassword(password) });
    await signIn(email, password).expect(200);
    for (let i = 0; i < SIGN_IN_FAILURES_PER_ACCOUNT; i++) await signIn(email, `wrong guess number ${i}`).expect(401);
    const locked = await signIn(email, password).expect(429);
    expect(Number(locked.headers['retry-after'])).toBeGreaterThan(800);
    expect(locked.body.detail).toMatch(/this account/);
    // Other accounts from the same address are not affected.
    await signIn(ctx.seed.adminEmail, ctx.config.demoAdmin.password).expect(200);
  });
});

describe('throttling per address', () => {
  it(`refuses an address after ${SIGN_IN_FAILURES_PER_ADDRESS} failures across accounts`, async () => {
    const fresh = await createTestApp();
    try {
      for (let i = 0; i < SIGN_IN_FAILURES_PER_ADDRESS; i++) {
        await request(fresh.app).post('/api/v1/session').send({ email: `sprayed.${i}@kestrel-ridge.example`, password: 'spring-2026-password' }).expect(401);
      }
      const refused = await request(fresh.app).post('/api/v1/session').send({ email: fresh.seed.adminEmail, password: fresh.config.demoAdmin.password }).expect(429);
      expect(refused.body.detail).toMatch(/your address/);
      expect(refused.headers['retry-after']).toBeDefined();
    } finally {
      await fresh.close();
    }
  });
});

describe('in production', () => {
  it('marks the session cookie Secure (behind a TLS-terminating proxy)', async () => {
    const prod = await createTestApp({ mode: 'production', trustProxy: 1 });
    try {
      const res = await request(prod.app)
        .post('/api/v1/session')
        .set('X-Forwarded-Proto', 'https')
        .send({ email: prod.seed.adminEmail, password: prod.config.demoAdmin.password })
        .expect(200);
      expect(res.headers['set-cookie']![0]).toMatch(/; Secure/);
    } finally {
      await prod.close();
    }
  });
});
