import { randomUUID } from 'node:crypto';
import { hash } from '@node-rs/argon2';
import { and, eq, inArray, sql } from 'drizzle-orm';
import request from 'supertest';
import type TestAgent from 'supertest/lib/agent.js';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { keyQuotaDays, organisations, usageDaily, users } from '../../server/db/schema.ts';
import { openApiDocument } from '../../server/openapi/document.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// The rest of the role matrix (tests/http/roles.test.ts has anonymous / developer / admin / live key):
// a REVOKED key, an EXPIRED key, and the members and keys of ANOTHER ORGANISATION, on every route of
// the OpenAPI document (enumerated from it, so a new route fails here until it is placed).
// Expected answers: RFC 9110 §15.5.2 (401: no valid credentials) and RFC 6750 §3 (Bearer challenge);
// a key on a console-only route is refused with 403 whatever the key (roles.test.ts), so a dead key
// learns nothing there either; another organisation's ids are 404 (OWASP API Security Top 10, API1
// "broken object level authorization": answer as if the object did not exist, never 403, never 200).

type Method = 'get' | 'post' | 'patch' | 'delete';
type Operation = { tags?: string[]; security?: Record<string, string[]>[]; requestBody?: { content: Record<string, { schema: Record<string, unknown> }> } };
interface Route {
  method: Method;
  path: string;
  op: Operation;
  acceptsKey: boolean;
  /** No security at all: sign-in, password reset, accepting an invitation. */
  public: boolean;
}

const doc = openApiDocument() as unknown as { paths: Record<string, Record<string, Operation>>; components: { schemas: Record<string, Record<string, unknown>> } };
const ROUTES: Route[] = Object.entries(doc.paths)
  .filter(([path]) => path.startsWith('/api/v1/'))
  .flatMap(([path, ops]) =>
    Object.entries(ops).map(([method, op]) => ({
      method: method as Method,
      path,
      op,
      acceptsKey: op.security?.some((s) => 'apiKey' in s) ?? false,
      public: op.security === undefined || op.security.length === 0,
    })),
  );
const label = (r: Pick<Route, 'method' | 'path'>) => `${r.method.toUpperCase()} ${r.path}`;

const ORG_B = { name: 'Larkspur Fell Repeater Group', slug: 'larkspur-fell' };
const ORG_B_ADMIN = { email: 'mara.quist@larkspur-fell.example', displayName: 'Mara Quist' };
const ORG_B_DEVELOPER = { email: 'ivo.penrose@larkspur-fell.example', displayName: 'Ivo Penrose' };
const ORG_B_PASSWORD = 'larkspur-fell-passphrase';

let ctx: TestApp;
/** Organisation A (the seeded Kestrel Ridge club): the ids of one of each of its resources. */
const a = { cable: '', feedline: '', sweep: '', faultSweep: '', invitation: '', invitationEmail: 'sorrel.dane@kestrel-ridge.example', mail: '', member: '', key: '', keyDisplayStart: '' };
let revokedKey: { id: string; secret: string };
let expiredKey: { id: string; secret: string };
let orgB: { id: string; keySecret: string; keyId: string; feedline: string };

function resolveSchema(s: Record<string, unknown> | undefined): Record<string, unknown> {
  let cur = s ?? {};
  while (typeof cur.$ref === 'string') cur = doc.components.schemas[cur.$ref.split('/').pop()!]!;
  return cur;
}

/**
 * A VALID body for each route that takes one (the OpenAPI example, or a harmless change where the
 * example would disable someone), so that a refusal is about who asks and never about the body.
 */
function bodyFor(r: Route): object | undefined {
  const overrides: Record<string, object> = {
    'PATCH /api/v1/members/{id}': { displayName: 'Wren Aldous' },
    'PATCH /api/v1/keys/{id}': { note: 'matrix check' },
    'PATCH /api/v1/cables/{id}': { notes: 'matrix check' },
    'PATCH /api/v1/feedlines/{id}': { notes: 'matrix check' },
    'PATCH /api/v1/organisation': { defaultBurstPerMinute: 120 },
    'POST /api/v1/cables': { designation: 'Matrix reel', impedanceOhm: 50, velocityFactor: 0.8, attenuation: { kind: 'k1k2', k1: 0.6, k2: 0.003 }, source: 'invented for a test' },
    'POST /api/v1/invitations': { email: `matrix.${randomUUID().slice(0, 8)}@kestrel-ridge.example` },
    'POST /api/v1/keys': { name: 'matrix' },
  };
  if (overrides[label(r)]) return overrides[label(r)];
  const json = r.op.requestBody?.content['application/json'];
  if (!json) return undefined;
  return resolveSchema(json.schema).example as object;
}

/** Concrete URL of a route: organisation A's resource for `{id}`, plus the query a route needs. */
function urlFor(r: Route, id?: string): string {
  const ids: Record<string, string> = {
    '/api/v1/cables/{id}': a.cable,
    '/api/v1/cables/{id}/attenuation': a.cable,
    '/api/v1/feedlines/{id}': a.feedline,
    '/api/v1/feedlines/{id}/line': a.feedline,
    '/api/v1/feedlines/{id}/refer': a.feedline,
    '/api/v1/sweeps/{id}': a.sweep,
    '/api/v1/sweeps/{id}/points': a.sweep,
    '/api/v1/sweeps/{id}/points.csv': a.sweep,
    '/api/v1/sweeps/{id}/fault-distance': a.faultSweep,
    '/api/v1/keys/{id}': a.key,
    '/api/v1/members/{id}': a.member,
    '/api/v1/invitations/{id}': a.invitation,
    '/api/v1/mail/{id}': a.mail,
  };
  const query = r.path === '/api/v1/cables/{id}/attenuation' ? '?frequencyHz=14200000' : '';
  if (!r.path.includes('{')) return r.path + query;
  const resource = id ?? ids[r.path];
  if (!resource) throw new Error(`no resource of organisation A for ${r.path}; add one to urlFor`);
  return r.path.replace('{id}', resource) + query;
}

/** An id of the same shape that exists nowhere. */
const unknownIdFor = (path: string) => (path.startsWith('/api/v1/cables/') ? 'account-no-such-reel' : randomUUID());

type Client = { kind: 'key'; secret: string } | { kind: 'session'; agent: TestAgent };

function call(client: Client, r: Route, url: string) {
  const base = client.kind === 'key' ? request(ctx.app)[r.method](url).set('Authorization', `Bearer ${client.secret}`) : client.agent[r.method](url);
  const body = bodyFor(r);
  return body ? base.send(body) : base;
}

function expectProblem(res: request.Response, status: number, context: string) {
  expect(res.status, `${context}: ${res.text.slice(0, 300)}`).toBe(status);
  expect(res.headers['content-type'], context).toMatch(/^application\/problem\+json/);
}

beforeAll(async () => {
  ctx = await createTestApp();
  const db = ctx.database.db;
  const admin = await ctx.adminAgent();

  // Organisation A's resources, made the way its members make them.
  a.cable = (await admin.post('/api/v1/cables').send({ id: 'account-kestrel-reel', designation: 'Kestrel reel', impedanceOhm: 50, velocityFactor: 0.82, attenuation: { kind: 'k1k2', k1: 0.7, k2: 0.004 }, source: 'invented for a test' }).expect(201)).body.id;
  a.feedline = (await request(ctx.app).post('/api/v1/feedlines').set(ctx.auth).send({ name: 'Kestrel matrix run', sections: [{ cableId: a.cable, lengthM: 20 }] }).expect(201)).body.id;
  a.sweep = (await request(ctx.app).post('/api/v1/sweeps').set(ctx.auth).send(resolveSchema(doc.components.schemas.CreateSweepJson).example as object).expect(201)).body.id;
  // Distance to fault needs evenly spaced points: those of the documented fault-distance request.
  const faultPoints = (resolveSchema(doc.components.schemas.FaultDistanceRequest).example as { points: object[] }).points;
  a.faultSweep = (await request(ctx.app).post('/api/v1/sweeps').set(ctx.auth).send({ name: 'Kestrel feeder sweep', points: faultPoints }).expect(201)).body.id;
  a.invitation = (await admin.post('/api/v1/invitations').send({ email: a.invitationEmail }).expect(201)).body.id;
  a.mail = (await admin.get('/api/v1/mail').query({ to: a.invitationEmail }).expect(200)).body.messages[0].id;
  a.member = ctx.seed.developerId;
  a.key = ctx.seed.developerKeyId;
  a.keyDisplayStart = (await admin.get(`/api/v1/keys/${a.key}`).expect(200)).body.displayStart;

  // A key that worked (so a server may have cached it), then was revoked by an admin.
  const actor = { userId: ctx.seed.adminId, label: ctx.seed.adminEmail };
  const toRevoke = await createKey(db, { organisationId: ctx.seed.organisationId, ownerId: ctx.seed.developerId, name: 'to be revoked', note: '', dailyQuota: 1_000, burstPerMinute: 1_000, actor }, new Date());
  await request(ctx.app).post('/api/v1/mismatch').set('Authorization', `Bearer ${toRevoke.secret}`).send({ swr: 1.5 }).expect(200);
  await admin.delete(`/api/v1/keys/${toRevoke.key.id}`).expect(200);
  revokedKey = { id: toRevoke.key.id, secret: toRevoke.secret };

  // A key that worked and then reached its expiry time: nothing announces that, the clock does.
  const expiresAt = new Date(Date.now() + 1_500);
  const toExpire = await createKey(db, { organisationId: ctx.seed.organisationId, ownerId: ctx.seed.developerId, name: 'short lived', note: '', expiresAt, dailyQuota: 1_000, burstPerMinute: 1_000, actor }, new Date());
  await request(ctx.app).post('/api/v1/mismatch').set('Authorization', `Bearer ${toExpire.secret}`).send({ swr: 1.5 }).expect(200);
  expiredKey = { id: toExpire.key.id, secret: toExpire.secret };

  // Organisation B, made directly in the database (organisations are created by operators, not by the API).
  const [org] = await db.insert(organisations).values(ORG_B).returning({ id: organisations.id });
  const passwordHash = await hash(ORG_B_PASSWORD);
  const [adminB] = await db.insert(users).values({ organisationId: org!.id, ...ORG_B_ADMIN, role: 'admin', passwordHash }).returning({ id: users.id });
  const [developerB] = await db.insert(users).values({ organisationId: org!.id, ...ORG_B_DEVELOPER, role: 'developer', passwordHash }).returning({ id: users.id });
  const keyB = await createKey(
    db,
    { organisationId: org!.id, ownerId: developerB!.id, name: 'larkspur logger', note: '', dailyQuota: 100_000, burstPerMinute: 100_000, actor: { userId: adminB!.id, label: ORG_B_ADMIN.email } },
    new Date(),
  );
  const feedlineB = (await request(ctx.app).post('/api/v1/feedlines').set('Authorization', `Bearer ${keyB.secret}`).send({ name: 'Larkspur repeater jumper', sections: [{ cableId: 'rg-213', lengthM: 8 }] }).expect(201)).body.id;
  orgB = { id: org!.id, keySecret: keyB.secret, keyId: keyB.key.id, feedline: feedlineB };

  const wait = expiresAt.getTime() + 50 - Date.now();
  if (wait > 0) await new Promise((r) => setTimeout(r, wait));
}, 60_000);

afterAll(async () => {
  await ctx?.close();
});

describe('revoked and expired keys', () => {
  it('are refused at once, although each worked before', async () => {
    // The revocation is announced in its own transaction (LISTEN/NOTIFY); allow the announcement a second to arrive.
    for (let i = 0; i < 50; i++) {
      if ((await request(ctx.app).post('/api/v1/mismatch').set('Authorization', `Bearer ${revokedKey.secret}`).send({ swr: 1.5 })).status === 401) break;
      await new Promise((r) => setTimeout(r, 20));
    }
    for (const key of [revokedKey, expiredKey]) {
      const res = await request(ctx.app).post('/api/v1/mismatch').set('Authorization', `Bearer ${key.secret}`).send({ swr: 1.5 });
      expectProblem(res, 401, 'POST /api/v1/mismatch');
      expect(res.headers['www-authenticate']).toMatch(/^Bearer /);
    }
  });

  it('covers every route of the OpenAPI document: key routes, console-only routes and the public ones', () => {
    expect(ROUTES.filter((r) => r.acceptsKey).length).toBeGreaterThanOrEqual(20);
    expect(ROUTES.filter((r) => r.public).map(label).sort()).toEqual(
      ['GET /api/v1/openapi.json', 'POST /api/v1/session', 'POST /api/v1/password-reset', 'POST /api/v1/password-reset/confirm', 'POST /api/v1/invitations/accept'].sort(),
    );
  });

  for (const r of ROUTES.filter((x) => !x.public)) {
    const expected = r.acceptsKey ? 401 : 403;
    it(`${label(r)} answers a revoked key and an expired key ${expected}, as ${r.acceptsKey ? 'it answers no key' : 'it answers any key'}`, async () => {
      for (const [name, key] of [['revoked', revokedKey], ['expired', expiredKey]] as const) {
        const res = await call({ kind: 'key', secret: key.secret }, r, urlFor(r));
        expectProblem(res, expected, `${name} key`);
        if (expected === 401) expect(res.headers['www-authenticate'], `${name} key`).toMatch(/^Bearer /);
        // Nothing of what the route guards leaks into the refusal.
        expect(res.text).not.toContain(ctx.seed.organisationId);
      }
      if (r.acceptsKey) {
        // Controls: without any key the same request is a 401 too, and with a live key it succeeds, so
        // the refusal is about the key and not the URL or body (a DELETE is not repeated here).
        expectProblem(await (bodyFor(r) ? request(ctx.app)[r.method](urlFor(r)).send(bodyFor(r)!) : request(ctx.app)[r.method](urlFor(r))), 401, 'no key');
        if (r.method !== 'delete') {
          const live = await call({ kind: 'key', secret: ctx.seed.developerKey }, r, urlFor(r));
          expect(live.status, `live key: ${live.text.slice(0, 300)}`).toBeLessThan(300);
        }
      }
    });
  }

  it('spent nothing after being refused: the quota and usage still show only the one call each made while valid', async () => {
    const ids = [revokedKey.id, expiredKey.id];
    const read = async () => {
      const quota = await ctx.database.db.select({ keyId: keyQuotaDays.keyId, used: keyQuotaDays.used }).from(keyQuotaDays).where(inArray(keyQuotaDays.keyId, ids));
      const usage = await ctx.database.db
        .select({ keyId: usageDaily.keyId, units: sql<number>`sum(${usageDaily.units})::int`, requests: sql<number>`sum(${usageDaily.requests})::int` })
        .from(usageDaily)
        .where(inArray(usageDaily.keyId, ids))
        .groupBy(usageDaily.keyId);
      return ids.map((id) => ({ id, used: quota.filter((q) => q.keyId === id).reduce((s, q) => s + q.used, 0), units: usage.find((u) => u.keyId === id)?.units ?? 0, requests: usage.find((u) => u.keyId === id)?.requests ?? 0 }));
    };
    const expected = ids.map((id) => ({ id, used: 1, units: 1, requests: 1 }));
    // Written with the spend, or (should metering ever buffer) within a few seconds; never more.
    let seen = await read();
    for (let i = 0; i < 50 && JSON.stringify(seen) !== JSON.stringify(expected); i++) {
      await new Promise((r) => setTimeout(r, 100));
      seen = await read();
    }
    expect(seen).toEqual(expected);
  });
});

describe('another organisation', () => {
  let adminB: TestAgent;
  let developerB: TestAgent;
  let before: unknown;
  const callers = (): { who: string; client: Client }[] => [
    { who: 'its admin (session)', client: { kind: 'session', agent: adminB } },
    { who: 'its developer (session)', client: { kind: 'session', agent: developerB } },
    { who: 'its key', client: { kind: 'key', secret: orgB.keySecret } },
  ];

  const idRoutes = ROUTES.filter((r) => r.path.includes('{'));

  /** What organisation A's admin sees of A's resources, without the times that move by themselves. */
  async function snapshotOfA(): Promise<unknown> {
    const admin = await ctx.adminAgent();
    const seen: Record<string, unknown> = {};
    const paths = [...idRoutes.filter((r) => r.method === 'get').map((r) => urlFor(r)), '/api/v1/members', '/api/v1/invitations', '/api/v1/keys', '/api/v1/cables', '/api/v1/feedlines', '/api/v1/sweeps', '/api/v1/organisation'];
    for (const path of paths) {
      const res = await admin.get(path);
      // Times and units that move with A's own use (and write-behind) are not B's doing.
      const steady = res.text.replace(/"lastUsedAt":(null|"[^"]*")/g, '"lastUsedAt":"—"').replace(/"usedToday":\d+/g, '"usedToday":0');
      seen[path] = { status: res.status, body: res.text.startsWith('{') ? JSON.parse(steady) : res.text };
    }
    return seen;
  }

  beforeAll(async () => {
    adminB = await ctx.signIn(ORG_B_ADMIN.email, ORG_B_PASSWORD);
    developerB = await ctx.signIn(ORG_B_DEVELOPER.email, ORG_B_PASSWORD);
    before = await snapshotOfA();
  });

  it('has every route with an id in the OpenAPI document placed against one of organisation A\'s resources', () => {
    expect(idRoutes.length).toBeGreaterThanOrEqual(15);
    for (const r of idRoutes) expect(() => urlFor(r), label(r)).not.toThrow();
  });


  for (const r of idRoutes) {
    it(`${label(r)} with organisation A's id is 404 for organisation B's admin${r.acceptsKey ? ' and key' : ''}, and tells its developer nothing`, async () => {
      for (const { who, client } of callers()) {
        const foreign = await call(client, r, urlFor(r));
        const unknown = await call(client, r, urlFor(r, unknownIdFor(r.path)));
        // Whatever the caller may do on this route, A's id looks exactly like an id that does not exist.
        expect(foreign.status, `${who}: ${foreign.text.slice(0, 300)}`).toBe(unknown.status);
        const expected = who.includes('admin') || (client.kind === 'key' && r.acceptsKey) ? 404 : client.kind === 'key' ? 403 : unknown.status;
        expectProblem(foreign, expected, who);
        expect([403, 404], who).toContain(foreign.status);
        expect(foreign.text, who).not.toContain(ctx.seed.organisationId);
      }
    });
  }

  const markers = () => [
    ctx.seed.organisationId,
    'Kestrel Ridge',
    'kestrel-ridge.example',
    ctx.seed.adminId,
    ctx.seed.developerId,
    a.cable,
    a.feedline,
    a.sweep,
    a.invitation,
    a.mail,
    a.key,
    a.keyDisplayStart,
    revokedKey.id,
    expiredKey.id,
  ];
  // Organisation data only: the OpenAPI document is public and the same for everyone (its examples name the demo club).
  const listRoutes = ROUTES.filter((r) => r.method === 'get' && !r.path.includes('{') && !r.public);

  for (const r of listRoutes) {
    it(`${label(r)} never shows organisation A's data to organisation B`, async () => {
      // Also with A's ids as filters, where the route takes them.
      const filters = r.path === '/api/v1/usage' ? ['', `?keyId=${a.key}`, `?userId=${a.member}`] : r.path === '/api/v1/keys' ? ['', `?ownerId=${a.member}`] : [''];
      let seenOwn = false;
      for (const { who, client } of callers()) {
        for (const filter of filters) {
          const res = await (client.kind === 'key' ? request(ctx.app).get(r.path + filter).set('Authorization', `Bearer ${client.secret}`) : client.agent.get(r.path + filter));
          expect(res.status, `${who} ${filter}`).not.toBeGreaterThanOrEqual(500);
          // A problem's `instance` echoes the URL the caller sent (with A's id as the filter); the rest must not.
          const text = res.status >= 400 ? JSON.stringify({ ...(JSON.parse(res.text) as object), instance: undefined }) : res.text;
          for (const m of markers()) expect(text, `${who} ${r.path}${filter} shows ${m}`).not.toContain(m);
          if ([orgB.id, orgB.feedline, orgB.keyId, 'larkspur-fell'].some((own) => res.text.includes(own))) seenOwn = true;
        }
      }
      // Lists that show anything at all to B show B's own things (control: the route did answer).
      if (['/api/v1/feedlines', '/api/v1/organisation', '/api/v1/members', '/api/v1/session', '/api/v1/keys'].includes(r.path)) expect(seenOwn).toBe(true);
    });
  }

  it('refuses organisation A\'s resources named inside request bodies', async () => {
    const keyB = { Authorization: `Bearer ${orgB.keySecret}` };
    // A's account cable is unknown to B's calculations and feed lines.
    const line = await request(ctx.app).post('/api/v1/line').set(keyB).send({ frequencyHz: 14_200_000, line: { cableId: a.cable, lengthM: 10 }, loadOhm: 50 });
    expectProblem(line, 422, 'line with A\'s cable');
    expect(line.text).toContain(a.cable);
    expectProblem(await request(ctx.app).post('/api/v1/feedlines').set(keyB).send({ name: 'borrowed', sections: [{ cableId: a.cable, lengthM: 5 }] }), 422, 'feed line with A\'s cable');
    // A's saved feed line cannot carry B's sweep.
    const sweep = { ...(resolveSchema(doc.components.schemas.CreateSweepJson).example as object), feedlineId: a.feedline, direction: 'inputToLoad' };
    expectProblem(await request(ctx.app).post('/api/v1/sweeps').set(keyB).send(sweep), 422, 'sweep through A\'s feed line');
    // B's admin cannot issue a key for A's member.
    const adminBAgent = await ctx.signIn(ORG_B_ADMIN.email, ORG_B_PASSWORD);
    expectProblem(await adminBAgent.post('/api/v1/keys').send({ name: 'borrowed', ownerId: a.member }), 404, 'key for A\'s member');
    // A batch item naming A's cable fails on its own, with the same problem.
    const batch = await request(ctx.app).post('/api/v1/batch').set(keyB).send({ items: [{ op: 'line', input: { frequencyHz: 14_200_000, line: { cableId: a.cable, lengthM: 10 }, loadOhm: 50 } }] });
    expect(batch.status).toBe(200);
    expect(batch.body.results[0]).toMatchObject({ ok: false, problem: { status: 422 } });
  });

  it('left organisation A\'s resources as they were, and A still uses them', async () => {
    // Nothing B sent (PATCH, DELETE, a key for A's member) reached A's rows.
    expect(await snapshotOfA()).toEqual(before);
    const [member] = await ctx.database.db.select({ displayName: users.displayName, disabled: users.disabled }).from(users).where(and(eq(users.id, a.member)));
    expect(member).toEqual({ displayName: 'Wren Aldous', disabled: false });
    // A's own calls on the same routes, ids and bodies succeed (control: B's 404s were about B).
    const admin = await ctx.adminAgent();
    for (const r of idRoutes.filter((x) => x.method !== 'delete')) {
      const res = await call({ kind: 'session', agent: admin }, r, urlFor(r));
      expect(res.status, `${label(r)}: ${res.text.slice(0, 300)}`).toBeLessThan(300);
    }
    expect((await request(ctx.app).post('/api/v1/mismatch').set(ctx.auth).send({ swr: 1.5 })).status).toBe(200);
  });
});
