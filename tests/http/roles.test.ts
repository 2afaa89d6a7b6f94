import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { users } from '../../server/db/schema.ts';
import { openApiDocument } from '../../server/openapi/document.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// The role matrix: every route of the accounts API × anonymous / developer / admin / key caller.
// Expected statuses follow the role definitions; 401 vs 403 follows RFC 9110 §15.5.2 and §15.5.4
// (401: no valid credentials; 403: known caller without the right). Calculation routes are swept
// generically at the end: they answer anonymous callers 401 and let keys through.

type Who = 'anonymous' | 'developer' | 'admin' | 'key';
const WHO: Who[] = ['anonymous', 'developer', 'admin', 'key'];

interface Case {
  method: 'get' | 'post' | 'patch' | 'delete';
  /** The OpenAPI path, e.g. `/api/v1/keys/{id}`. */
  path: string;
  expect: Record<Who, number>;
  /** Builds the concrete URL and body for one caller (fresh fixtures when the call consumes them). */
  prepare?: (who: Who) => Promise<{ url?: string; body?: object }>;
}

let ctx: TestApp;
let spareMemberId: string;
let mailId: string;
let n = 0;

beforeAll(async () => {
  ctx = await createTestApp();
  const [spare] = await ctx.database.db
    .insert(users)
    .values({ organisationId: ctx.seed.organisationId, email: 'quill.orme@kestrel-ridge.example', displayName: 'Quill Orme' })
    .returning();
  spareMemberId = spare!.id;
  const admin = await ctx.adminAgent();
  await admin.post('/api/v1/invitations').send({ email: 'matrix.seed@kestrel-ridge.example' }).expect(201);
  mailId = (await admin.get('/api/v1/mail').expect(200)).body.messages[0].id;
});
afterAll(async () => {
  await ctx.close();
});

async function freshDeveloperKeyId(): Promise<string> {
  const dev = await ctx.developerAgent();
  return (await dev.post('/api/v1/keys').send({ name: `matrix ${++n}` }).expect(201)).body.key.id;
}

async function freshInvitationId(): Promise<string> {
  const admin = await ctx.adminAgent();
  return (await admin.post('/api/v1/invitations').send({ email: `matrix.${++n}@kestrel-ridge.example` }).expect(201)).body.id;
}

const S = (anonymous: number, developer: number, admin: number, key: number): Record<Who, number> => ({ anonymous, developer, admin, key });

const CASES: Case[] = [
  { method: 'post', path: '/api/v1/session', expect: S(200, 200, 200, 200), prepare: async () => ({ body: { email: ctx.seed.adminEmail, password: ctx.config.demoAdmin.password } }) },
  { method: 'get', path: '/api/v1/session', expect: S(401, 200, 200, 403) },
  { method: 'delete', path: '/api/v1/session', expect: S(401, 204, 204, 403) },
  { method: 'post', path: '/api/v1/password-reset', expect: S(202, 202, 202, 202), prepare: async () => ({ body: { email: 'nobody.here@kestrel-ridge.example' } }) },
  { method: 'post', path: '/api/v1/password-reset/confirm', expect: S(422, 422, 422, 422), prepare: async () => ({ body: { token: 'x'.repeat(43), password: 'a long enough passphrase' } }) },
  { method: 'get', path: '/api/v1/keys', expect: S(401, 200, 200, 403) },
  { method: 'post', path: '/api/v1/keys', expect: S(401, 201, 201, 403), prepare: async () => ({ body: { name: 'matrix' } }) },
  { method: 'get', path: '/api/v1/keys/{id}', expect: S(401, 200, 200, 403), prepare: async () => ({ url: `/api/v1/keys/${ctx.seed.developerKeyId}` }) },
  { method: 'patch', path: '/api/v1/keys/{id}', expect: S(401, 403, 200, 403), prepare: async () => ({ url: `/api/v1/keys/${ctx.seed.developerKeyId}`, body: { dailyQuota: 1_000_000 } }) },
  { method: 'delete', path: '/api/v1/keys/{id}', expect: S(401, 200, 200, 403), prepare: async () => ({ url: `/api/v1/keys/${await freshDeveloperKeyId()}` }) },
  { method: 'get', path: '/api/v1/usage', expect: S(401, 200, 200, 200) },
  { method: 'get', path: '/api/v1/members', expect: S(401, 403, 200, 403) },
  { method: 'patch', path: '/api/v1/members/{id}', expect: S(401, 403, 200, 403), prepare: async () => ({ url: `/api/v1/members/${spareMemberId}`, body: { displayName: `Quill Orme ${++n}` } }) },
  { method: 'get', path: '/api/v1/invitations', expect: S(401, 403, 200, 403) },
  { method: 'post', path: '/api/v1/invitations', expect: S(401, 403, 201, 403), prepare: async () => ({ body: { email: `matrix.${++n}@kestrel-ridge.example` } }) },
  { method: 'delete', path: '/api/v1/invitations/{id}', expect: S(401, 403, 200, 403), prepare: async () => ({ url: `/api/v1/invitations/${await freshInvitationId()}` }) },
  { method: 'post', path: '/api/v1/invitations/accept', expect: S(422, 422, 422, 422), prepare: async () => ({ body: { token: 'x'.repeat(43), displayName: 'X', password: 'a long enough passphrase' } }) },
  { method: 'get', path: '/api/v1/organisation', expect: S(401, 200, 200, 200) },
  { method: 'patch', path: '/api/v1/organisation', expect: S(401, 403, 200, 403), prepare: async () => ({ body: { defaultBurstPerMinute: 120 } }) },
  { method: 'get', path: '/api/v1/audit', expect: S(401, 403, 200, 403) },
  { method: 'get', path: '/api/v1/mail', expect: S(401, 403, 200, 403) },
  { method: 'get', path: '/api/v1/mail/{id}', expect: S(401, 403, 200, 403), prepare: async () => ({ url: `/api/v1/mail/${mailId}` }) },
];

async function send(who: Who, c: Case) {
  const { url = c.path, body } = (await c.prepare?.(who)) ?? {};
  const client =
    who === 'developer' ? await ctx.developerAgent() : who === 'admin' ? await ctx.adminAgent() : request(ctx.app);
  let req = client[c.method](url);
  if (who === 'key') req = req.set(ctx.auth);
  return body ? req.send(body) : req;
}

const OWN_TAGS = new Set(['Session', 'Keys', 'Usage', 'Members', 'Invitations', 'Organisation', 'Audit', 'Local mail']);
type Operations = Record<string, Record<string, { tags?: string[]; security?: Record<string, string[]>[] }>>;
/** Routes documented as console-only (no apiKey scheme): admin writes such as account cables. */
const consoleOnly = (op: { security?: Record<string, string[]>[] }) => op.security !== undefined && !op.security.some((s) => 'apiKey' in s);

describe('the role matrix', () => {
  it('lists every accounts route of the OpenAPI document', () => {
    const paths = openApiDocument().paths as Operations;
    const documented = Object.entries(paths).flatMap(([path, ops]) =>
      Object.entries(ops)
        .filter(([, op]) => op.tags?.some((t) => OWN_TAGS.has(t)))
        .map(([method]) => `${method} ${path}`),
    );
    expect(CASES.map((c) => `${c.method} ${c.path}`).sort()).toEqual(documented.sort());
  });

  for (const c of CASES) {
    for (const who of WHO) {
      it(`${c.method.toUpperCase()} ${c.path} as ${who} → ${c.expect[who]}`, async () => {
        const res = await send(who, c);
        expect(res.status, res.text).toBe(c.expect[who]);
        if (res.status >= 400) expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
      });
    }
  }
});

describe('the calculation routes', () => {
  const calc = Object.entries(openApiDocument().paths as Operations).flatMap(([path, ops]) =>
    Object.entries(ops)
      .filter(([, op]) => path.startsWith('/api/v1/') && path !== '/api/v1/openapi.json' && !op.tags?.some((t) => OWN_TAGS.has(t)))
      .map(([method, op]) => ({ method: method as 'get' | 'post', path, url: path.replace(/\{[^}]+\}/g, 'no-such-id'), consoleOnly: consoleOnly(op) })),
  );

  it('exist in the OpenAPI document', () => {
    expect(calc.length).toBeGreaterThan(0);
  });

  for (const r of calc.filter((c) => c.consoleOnly)) {
    it(`${r.method.toUpperCase()} ${r.path} is for signed-in admins: 401 anonymous, 403 for keys and developers`, async () => {
      expect((await request(ctx.app)[r.method](r.url).send({})).status).toBe(401);
      expect((await request(ctx.app)[r.method](r.url).set(ctx.auth).send({})).status).toBe(403);
      const dev = await ctx.developerAgent();
      expect((await dev[r.method](r.url).send({})).status).toBe(403);
      const admin = await ctx.adminAgent();
      expect([401, 403]).not.toContain((await admin[r.method](r.url).send({})).status);
    });
  }

  for (const r of calc.filter((c) => !c.consoleOnly)) {
    it(`${r.method.toUpperCase()} ${r.path} answers 401 without a key or session, and lets keys and sessions through`, async () => {
      const anonymous = await request(ctx.app)[r.method](r.url).send({});
      expect(anonymous.status).toBe(401);
      const keyed = await request(ctx.app)[r.method](r.url).set(ctx.auth).send({});
      expect([401, 403]).not.toContain(keyed.status);
      const dev = await ctx.developerAgent();
      const console = await dev[r.method](r.url).send({});
      expect([401, 403]).not.toContain(console.status);
    });
  }
});
