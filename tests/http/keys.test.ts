import { createHash } from 'node:crypto';
import { eq, sql } from 'drizzle-orm';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { apiKeys, organisations, users } from '../../server/db/schema.ts';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { createTestApp, manualClock, type TestApp } from '../helpers/app.ts';

// Key handling follows common practice for API keys (a product prefix, 256 random bits, only a
// SHA-256 hash stored, shown once) and RFC 6750 §3 for the 401 answer to a bad Bearer token.
const KEY_FORMAT = /^gml_[A-Za-z0-9_-]{43}$/;

let ctx: TestApp;
const clock = manualClock(new Date());
let admin: Awaited<ReturnType<TestApp['adminAgent']>>;
let developer: Awaited<ReturnType<TestApp['adminAgent']>>;

beforeAll(async () => {
  ctx = await createTestApp({}, { clock });
  admin = await ctx.adminAgent();
  developer = await ctx.developerAgent();
});
afterAll(async () => {
  await ctx.close();
});

const withoutInstance = ({ instance: _instance, ...rest }: Record<string, unknown>) => rest;
const usage = (key: string) => request(ctx.app).get('/api/v1/usage').set('Authorization', `Bearer ${key}`);

describe('issuing a key', () => {
  it('shows a prefixed key of 32 random bytes once and stores only its SHA-256 hash and display start', async () => {
    const res = await developer.post('/api/v1/keys').send({ name: 'Shack logger', note: 'ridge hut laptop' }).expect(201);
    expect(res.headers['cache-control']).toBe('no-store');
    const secret = res.body.secret as string;
    expect(secret).toMatch(KEY_FORMAT);
    expect(Buffer.from(secret.slice(4), 'base64url')).toHaveLength(32);
    expect(res.body.key).toMatchObject({ name: 'Shack logger', note: 'ridge hut laptop', displayStart: secret.slice(0, 10), state: 'active', usedToday: 0, lastUsedAt: null });
    expect(res.body.key.owner.id).toBe(ctx.seed.developerId);

    const [row] = await ctx.database.db.select().from(apiKeys).where(eq(apiKeys.id, res.body.key.id));
    expect(row!.keyHash).toBe(createHash('sha256').update(secret).digest('hex'));
    expect(JSON.stringify(row)).not.toContain(secret.slice(10));
  });

  it('gives a new key the organisation defaults', async () => {
    const res = await developer.post('/api/v1/keys').send({ name: 'defaults' }).expect(201);
    expect(res.body.key).toMatchObject({ dailyQuota: 10_000, burstPerMinute: 120 });
  });

  it('gives keys issued after an admin changes the organisation defaults the new defaults, and audits the change', async () => {
    await admin.patch('/api/v1/organisation').send({ defaultDailyQuota: 20_000 }).expect(200);
    try {
      const res = await developer.post('/api/v1/keys').send({ name: 'new defaults' }).expect(201);
      expect(res.body.key).toMatchObject({ dailyQuota: 20_000, burstPerMinute: 120 });
      const audit = await admin.get('/api/v1/audit').expect(200);
      expect(audit.body.events).toContainEqual(expect.objectContaining({ action: 'organisation.defaults_changed', details: { before: { defaultDailyQuota: 10_000, defaultBurstPerMinute: 120 }, after: { defaultDailyQuota: 20_000, defaultBurstPerMinute: 120 } } }));
    } finally {
      await admin.patch('/api/v1/organisation').send({ defaultDailyQuota: 10_000 }).expect(200);
    }
  });

  it('lets an admin issue a key with its own limits for a member, and audits it', async () => {
    const res = await admin.post('/api/v1/keys').send({ name: 'sweep uploader', ownerId: ctx.seed.developerId, dailyQuota: 500, burstPerMinute: 30 }).expect(201);
    expect(res.body.key).toMatchObject({ dailyQuota: 500, burstPerMinute: 30, createdById: ctx.seed.adminId });
    expect(res.body.key.owner.id).toBe(ctx.seed.developerId);
    const audit = await admin.get('/api/v1/audit').expect(200);
    expect(audit.body.events).toContainEqual(expect.objectContaining({ action: 'key.created', targetId: res.body.key.id, actorLabel: ctx.seed.adminEmail }));
  });

  it('works at once as a Bearer key', async () => {
    const res = await developer.post('/api/v1/keys').send({ name: 'immediate' }).expect(201);
    await usage(res.body.secret).expect(200);
  });
});

describe('refused key requests say how to fix them', () => {
  it('refuses a developer issuing keys for someone else or setting quotas (403)', async () => {
    const other = await developer.post('/api/v1/keys').send({ name: 'x', ownerId: ctx.seed.adminId }).expect(403);
    expect(other.body.detail).toMatch(/ownerId/);
    const quota = await developer.post('/api/v1/keys').send({ name: 'x', dailyQuota: 99 }).expect(403);
    expect(quota.body.detail).toMatch(/admins/);
  });

  it('answers a missing name or an unknown field with a 400 field list', async () => {
    const res = await developer.post('/api/v1/keys').send({ note: 'no name' }).expect(400);
    expect(res.body.errors).toContainEqual(expect.objectContaining({ field: 'name' }));
    const extra = await developer.post('/api/v1/keys').send({ name: 'x', colour: 'red' }).expect(400);
    expect(extra.headers['content-type']).toMatch(/application\/problem\+json/);
  });

  it('answers an expiry in the past with 422', async () => {
    const res = await developer.post('/api/v1/keys').send({ name: 'x', expiresAt: '2001-01-01T00:00:00Z' }).expect(422);
    expect(res.body.errors).toEqual([{ field: 'expiresAt', message: 'must be in the future' }]);
  });

  it('answers an owner outside the organisation with 404 and a disabled owner with 409', async () => {
    await admin.post('/api/v1/keys').send({ name: 'x', ownerId: '00000000-0000-4000-8000-000000000000' }).expect(404);
    const [disabled] = await ctx.database.db
      .insert(users)
      .values({ organisationId: ctx.seed.organisationId, email: 'idle.member@kestrel-ridge.example', displayName: 'Idle Member', disabled: true })
      .returning();
    const res = await admin.post('/api/v1/keys').send({ name: 'x', ownerId: disabled!.id }).expect(409);
    expect(res.body.detail).toMatch(/enable them/);
  });

  it('answers a malformed key id with 400, not 500', async () => {
    await developer.get('/api/v1/keys/not-a-uuid').expect(400);
  });
});

describe('listing keys', () => {
  it('never returns a secret or a hash', async () => {
    const res = await admin.get('/api/v1/keys').expect(200);
    const text = JSON.stringify(res.body);
    expect(text).not.toMatch(/keyHash|key_hash|secret/);
    expect(text).not.toContain(ctx.seed.developerKey);
  });

  it('shows a developer only their own keys and an admin every key of the organisation', async () => {
    await admin.post('/api/v1/keys').send({ name: 'admin own' }).expect(201);
    const mine = await developer.get('/api/v1/keys').expect(200);
    expect(mine.body.keys.every((k: { owner: { id: string } }) => k.owner.id === ctx.seed.developerId)).toBe(true);
    const all = await admin.get('/api/v1/keys').expect(200);
    expect(all.body.keys.some((k: { owner: { id: string } }) => k.owner.id === ctx.seed.adminId)).toBe(true);
    const filtered = await admin.get(`/api/v1/keys?ownerId=${ctx.seed.adminId}`).expect(200);
    expect(filtered.body.keys.every((k: { owner: { id: string } }) => k.owner.id === ctx.seed.adminId)).toBe(true);
  });

  it('hides another member\'s key from a developer as not found', async () => {
    const adminKey = await admin.post('/api/v1/keys').send({ name: 'admin only' }).expect(201);
    await developer.get(`/api/v1/keys/${adminKey.body.key.id}`).expect(404);
    await developer.delete(`/api/v1/keys/${adminKey.body.key.id}`).expect(404);
    await developer.patch(`/api/v1/keys/${adminKey.body.key.id}`).send({ name: 'mine now' }).expect(404);
  });
});

describe('keys of another organisation', () => {
  it('are invisible: reading, changing and revoking them is 404 for an admin', async () => {
    const [org] = await ctx.database.db.insert(organisations).values({ name: 'Saltmarsh Beacon Group', slug: 'saltmarsh' }).returning();
    const [owner] = await ctx.database.db
      .insert(users)
      .values({ organisationId: org!.id, email: 'tamsin.reed@saltmarsh.example', displayName: 'Tamsin Reed', role: 'admin' })
      .returning();
    const foreign = await createKey(ctx.database.db, { organisationId: org!.id, ownerId: owner!.id, name: 'foreign', note: '', actor: { userId: owner!.id, label: 'x' } }, new Date());
    await admin.get(`/api/v1/keys/${foreign.key.id}`).expect(404);
    await admin.patch(`/api/v1/keys/${foreign.key.id}`).send({ dailyQuota: 1 }).expect(404);
    await admin.delete(`/api/v1/keys/${foreign.key.id}`).expect(404);
    const list = await admin.get('/api/v1/keys').expect(200);
    expect(list.body.keys.map((k: { id: string }) => k.id)).not.toContain(foreign.key.id);
    // The foreign key still works for its own organisation, and sees only its own organisation.
    const org2 = await request(ctx.app).get('/api/v1/organisation').set('Authorization', `Bearer ${foreign.secret}`).expect(200);
    expect(org2.body.slug).toBe('saltmarsh');
  });
});

describe('changing limits', () => {
  it('lets an admin change a key\'s quota, applies it to the next request and audits before and after', async () => {
    const created = await developer.post('/api/v1/keys').send({ name: 'to re-limit' }).expect(201);
    const res = await admin.patch(`/api/v1/keys/${created.body.key.id}`).send({ dailyQuota: 2500 }).expect(200);
    expect(res.body.dailyQuota).toBe(2500);
    const audit = await admin.get('/api/v1/audit').expect(200);
    expect(audit.body.events).toContainEqual(
      expect.objectContaining({
        action: 'key.quota_changed',
        targetId: created.body.key.id,
        details: { before: { dailyQuota: 10_000, burstPerMinute: 120 }, after: { dailyQuota: 2500, burstPerMinute: 120 } },
      }),
    );
  });

  it('lets an owner rename a key but not change its quota', async () => {
    const created = await developer.post('/api/v1/keys').send({ name: 'old name' }).expect(201);
    const res = await developer.patch(`/api/v1/keys/${created.body.key.id}`).send({ name: 'new name', note: 'moved to the tower PC' }).expect(200);
    expect(res.body).toMatchObject({ name: 'new name', note: 'moved to the tower PC' });
    await developer.patch(`/api/v1/keys/${created.body.key.id}`).send({ dailyQuota: 1 }).expect(403);
    await developer.patch(`/api/v1/keys/${created.body.key.id}`).send({}).expect(400);
  });
});

describe('browser origins of a key', () => {
  it('are set when the key is issued, shown with it, and replaced later by its owner', async () => {
    const created = await developer.post('/api/v1/keys').send({ name: 'contest page', allowedOrigins: ['https://log.example.org', 'http://127.0.0.1:8088'] }).expect(201);
    expect(created.body.key.allowedOrigins).toEqual(['https://log.example.org', 'http://127.0.0.1:8088']);
    const id = created.body.key.id as string;
    const listed = await developer.get('/api/v1/keys').expect(200);
    expect(listed.body.keys.find((k: { id: string }) => k.id === id).allowedOrigins).toEqual(['https://log.example.org', 'http://127.0.0.1:8088']);

    const changed = await developer.patch(`/api/v1/keys/${id}`).send({ allowedOrigins: ['https://monitor.example.net'] }).expect(200);
    expect(changed.body.allowedOrigins).toEqual(['https://monitor.example.net']);
    const read = await admin.get(`/api/v1/keys/${id}`).expect(200);
    expect(read.body.allowedOrigins).toEqual(['https://monitor.example.net']);
    const cleared = await developer.patch(`/api/v1/keys/${id}`).send({ allowedOrigins: [] }).expect(200);
    expect(cleared.body.allowedOrigins).toEqual([]);
  });

  it('default to none', async () => {
    const created = await developer.post('/api/v1/keys').send({ name: 'server only' }).expect(201);
    expect(created.body.key.allowedOrigins).toEqual([]);
  });

  it('must be exact origins: other values answer 422 with the form browsers send', async () => {
    const slash = await developer.post('/api/v1/keys').send({ name: 'x', allowedOrigins: ['https://Log.Example.org/'] }).expect(422);
    expect(slash.body.errors).toEqual([expect.objectContaining({ field: 'allowedOrigins.0', message: expect.stringContaining('https://log.example.org') })]);
    const path = await developer.patch(`/api/v1/keys/${ctx.seed.developerKeyId}`).send({ allowedOrigins: ['https://log.example.org:443/page'] }).expect(422);
    expect(path.body.errors[0].message).toContain('https://log.example.org ');
    for (const bad of ['log.example.org', 'ftp://files.example.org', '*', 'null']) {
      const res = await developer.post('/api/v1/keys').send({ name: 'x', allowedOrigins: [bad] }).expect(422);
      expect(res.body.errors[0].message, bad).toMatch(/scheme:\/\/host/);
    }
    await developer.post('/api/v1/keys').send({ name: 'x', allowedOrigins: ['https://a.example', 'https://a.example'] }).expect(422);
    const many = Array.from({ length: 21 }, (_, i) => `https://site${i}.example`);
    await developer.post('/api/v1/keys').send({ name: 'x', allowedOrigins: many }).expect(422);
    await developer.post('/api/v1/keys').send({ name: 'x', allowedOrigins: many.slice(0, 20) }).expect(201);
  });

  it('must be a list of strings: anything else answers 400', async () => {
    await developer.post('/api/v1/keys').send({ name: 'x', allowedOrigins: 'https://log.example.org' }).expect(400);
    await developer.post('/api/v1/keys').send({ name: 'x', allowedOrigins: [42] }).expect(400);
  });
});

describe('refused keys all look the same (RFC 6750 §3)', () => {
  it('answers missing, malformed, unknown, revoked and expired keys with one identical 401', async () => {
    const revoked = await developer.post('/api/v1/keys').send({ name: 'to revoke' }).expect(201);
    const gone = await developer.delete(`/api/v1/keys/${revoked.body.key.id}`).expect(200);
    expect(gone.body.state).toBe('revoked');
    expect(gone.body.revokedAt).not.toBeNull();

    const expiring = await developer.post('/api/v1/keys').send({ name: 'short lived', expiresAt: new Date(clock.now().getTime() + 60_000).toISOString() }).expect(201);
    await usage(expiring.body.secret).expect(200);
    clock.advance(61_000);

    const answers = await Promise.all([
      request(ctx.app).get('/api/v1/usage'),
      request(ctx.app).get('/api/v1/usage').set('Authorization', 'Bearer not-a-key'),
      request(ctx.app).get('/api/v1/usage').set('Authorization', `Basic ${Buffer.from('a:b').toString('base64')}`),
      usage(`gml_${'A'.repeat(43)}`),
      usage(revoked.body.secret),
      usage(expiring.body.secret),
    ]);
    for (const res of answers) {
      expect(res.status).toBe(401);
      expect(res.headers['www-authenticate']).toBe('Bearer realm="gammaline"');
      expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
      expect(withoutInstance(res.body)).toEqual(withoutInstance(answers[0]!.body));
    }
  });

  it('lists revoked and expired keys with their state', async () => {
    const list = await developer.get('/api/v1/keys').expect(200);
    const states = new Set(list.body.keys.map((k: { state: string }) => k.state));
    expect(states).toEqual(new Set(['active', 'revoked', 'expired']));
  });

  it('refuses to revoke a key twice (404)', async () => {
    const created = await developer.post('/api/v1/keys').send({ name: 'twice' }).expect(201);
    await developer.delete(`/api/v1/keys/${created.body.key.id}`).expect(200);
    await developer.delete(`/api/v1/keys/${created.body.key.id}`).expect(404);
  });

  it('records revocations in the audit trail', async () => {
    const audit = await admin.get('/api/v1/audit').expect(200);
    expect(audit.body.events.filter((e: { action: string }) => e.action === 'key.revoked').length).toBeGreaterThanOrEqual(2);
    const count = await ctx.database.db.execute(sql`select count(*)::int as n from audit_events where action = 'key.revoked'`);
    expect(count.rows[0]).toEqual({ n: audit.body.events.filter((e: { action: string }) => e.action === 'key.revoked').length });
  });
});

describe('role changes', () => {
  it('are audited with before and after, and an admin cannot demote or disable themselves (409)', async () => {
    const promoted = await admin.patch(`/api/v1/members/${ctx.seed.developerId}`).send({ role: 'admin' }).expect(200);
    expect(promoted.body.role).toBe('admin');
    await admin.patch(`/api/v1/members/${ctx.seed.developerId}`).send({ role: 'developer' }).expect(200);
    const audit = await admin.get('/api/v1/audit').expect(200);
    const changes = audit.body.events.filter((e: { action: string }) => e.action === 'member.role_changed').map((e: { details: unknown }) => e.details);
    expect(changes).toEqual([
      { email: 'wren.aldous@kestrel-ridge.example', before: 'admin', after: 'developer' },
      { email: 'wren.aldous@kestrel-ridge.example', before: 'developer', after: 'admin' },
    ]);
    const self = await admin.patch(`/api/v1/members/${ctx.seed.adminId}`).send({ role: 'developer' }).expect(409);
    expect(self.body.detail).toMatch(/ask another admin/);
    await admin.patch(`/api/v1/members/${ctx.seed.adminId}`).send({ disabled: true }).expect(409);
    await admin.patch(`/api/v1/members/${ctx.seed.adminId}`).send({ displayName: 'Ridge Admin' }).expect(200);
  });
});
