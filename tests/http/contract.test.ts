import { Writable } from 'node:stream';
import { pino } from 'pino';
import request from 'supertest';
import type TestAgent from 'supertest/lib/agent.js';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import express from 'express';
import { createApp } from '../../server/app.ts';
import { announceRetirement } from '../../server/http/deprecation.ts';
import { testConfig } from '../../server/config.ts';
import { openDatabase } from '../../server/db/client.ts';
import { openApiDocument } from '../../server/openapi/document.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// The v1 contract's rule for 400 and 422, walked over every operation of the OpenAPI document.
// Sources: RFC 9110 §15.5.1 (400: the request is malformed), RFC 4918 §11.2 (422: well-formed but
// cannot be processed), RFC 9110 §15.5.6 (405 with Allow), RFC 9457 §3 (problem details).

type Method = 'get' | 'post' | 'patch' | 'delete' | 'put';
type Schema = { $ref?: string; type?: string | string[]; properties?: Record<string, Schema>; required?: string[]; example?: unknown };
type Operation = {
  operationId?: string;
  parameters?: { name: string; in: string; required?: boolean; schema: Schema }[];
  requestBody?: { content: Record<string, { schema: Schema }> };
};
interface Route {
  method: Method;
  path: string;
  op: Operation;
}

const doc = openApiDocument() as unknown as { paths: Record<string, Record<string, Operation>>; components: { schemas: Record<string, Schema> } };
const ROUTES: Route[] = Object.entries(doc.paths).flatMap(([path, ops]) => Object.entries(ops).map(([method, op]) => ({ method: method as Method, path, op })));
const label = (r: Route) => `${r.method.toUpperCase()} ${r.path}`;

function resolve(s: Schema | undefined): Schema {
  let cur = s ?? {};
  while (typeof cur.$ref === 'string') cur = doc.components.schemas[cur.$ref.split('/').pop()!]!;
  return cur;
}

const JSON_ROUTES = ROUTES.filter((r) => r.op.requestBody?.content['application/json']);
const QUERY_ROUTES = ROUTES.filter((r) => r.op.parameters?.some((p) => p.in === 'query'));

/** A valid body of each JSON operation: its documented example, or one that changes nothing harmful. */
const VALID_BODIES: Record<string, object> = {
  'POST /api/v1/cables': { designation: 'Contract reel', impedanceOhm: 50, velocityFactor: 0.8, attenuation: { kind: 'k1k2', k1: 0.6, k2: 0.003 }, source: 'invented for a test' },
  'PATCH /api/v1/members/{id}': { displayName: 'Wren Aldous' },
  'PATCH /api/v1/keys/{id}': { note: 'contract check' },
  'POST /api/v1/keys': { name: 'contract' },
};

/** The schema's example, or one made of its fields' own examples. */
function exampleOf(schema: Schema): unknown {
  if (schema.example !== undefined) return schema.example;
  const fields = Object.entries(schema.properties ?? {}).flatMap(([name, s]) => (resolve(s).example === undefined ? [] : [[name, resolve(s).example]]));
  return fields.length > 0 ? Object.fromEntries(fields) : undefined;
}

function validBody(r: Route): Record<string, unknown> {
  const body = VALID_BODIES[label(r)] ?? exampleOf(resolve(r.op.requestBody!.content['application/json']!.schema));
  if (!body || typeof body !== 'object') throw new Error(`${label(r)} has no example body; add one to VALID_BODIES`);
  return structuredClone(body) as Record<string, unknown>;
}

function faultExample(): Record<string, unknown> {
  return structuredClone(resolve(doc.components.schemas.FaultDistanceRequest).example) as Record<string, unknown>;
}

/**
 * Physically impossible or uncomputable values for every calculation (each a well-formed request):
 * the answer is 422 naming the field. Impossibilities are the trade's (common practice): SWR below 1,
 * reflected power above forward, a negative length, a zero frequency, a line loss that makes readings
 * impossible.
 */
const IMPOSSIBLE: Record<string, { body: object; field: string }> = {
  'POST /api/v1/mismatch': { body: { forwardPowerW: 100, reflectedPowerW: 120 }, field: 'reflectedPowerW' },
  'POST /api/v1/reflection': { body: { reflection: { re: 0.9, im: 0.9 } }, field: 'reflection' },
  'POST /api/v1/line': { body: { frequencyHz: 14_200_000, line: { cableId: 'rg-213', lengthM: -3 }, loadOhm: 50 }, field: 'line.lengthM' },
  'POST /api/v1/refer': { body: { matchedLossDb: 6, direction: 'inputToLoad', reading: { forwardPowerW: 100, reflectedPowerW: 30 } }, field: 'reading.reflectedPowerW' },
  'POST /api/v1/match': { body: { frequencyHz: 0, loadOhm: { re: 12, im: -30 } }, field: 'frequencyHz' },
  'POST /api/v1/feedlines/{id}/line': { body: { frequencyHz: -7_100_000, loadOhm: 50 }, field: 'frequencyHz' },
  'POST /api/v1/feedlines/{id}/refer': { body: { frequencyHz: 7_100_000, direction: 'inputToLoad', reading: { swr: 0.8 } }, field: 'reading.swr' },
  // Farther than the documented sweep's unambiguous range c·VF/(2·step), about 24.7 m.
  'POST /api/v1/fault-distance': { body: { ...faultExample(), maxDistanceM: 1000 }, field: 'maxDistanceM' },
  'POST /api/v1/sweeps/{id}/fault-distance': { body: { line: { velocityFactor: 0.66 }, maxDistanceM: 1000 }, field: 'maxDistanceM' },
};

/** A value of another JSON type than the one given. */
const wrongTypeFor = (value: unknown): unknown => (typeof value === 'string' ? 12345 : 'not-this-type');

let ctx: TestApp;
let admin: TestAgent;
const ids: Record<string, string> = {};

function urlFor(r: Route): string {
  return r.path.replace('{id}', () => {
    const id = ids[r.path.split('/')[3]!];
    if (!id) throw new Error(`no resource for ${r.path}; add one in beforeAll`);
    return id;
  });
}

function send(r: Route, body: unknown, url = urlFor(r)) {
  return admin[r.method](url).set('Content-Type', 'application/json').send(JSON.stringify(body));
}

function expectProblem(res: request.Response, status: number, context: string): { field: string; message: string; hint?: string }[] {
  expect(res.status, `${context}: ${res.text.slice(0, 400)}`).toBe(status);
  expect(res.headers['content-type'], context).toMatch(/^application\/problem\+json/);
  return res.body.errors ?? [];
}

beforeAll(async () => {
  ctx = await createTestApp();
  admin = await ctx.adminAgent();
  ids.cables = (await admin.post('/api/v1/cables').send({ ...VALID_BODIES['POST /api/v1/cables'], id: 'account-contract-reel' }).expect(201)).body.id;
  ids.feedlines = (await admin.post('/api/v1/feedlines').send({ name: 'Contract run', sections: [{ cableId: 'rg-213', lengthM: 20 }] }).expect(201)).body.id;
  // A stored sweep distance to fault can use: the documented fault-distance request's evenly spaced points.
  ids.sweeps = (await admin.post('/api/v1/sweeps').send({ name: 'Contract sweep', points: faultExample().points }).expect(201)).body.id;
  ids.keys = ctx.seed.developerKeyId;
  ids.members = ctx.seed.developerId;
});
afterAll(async () => {
  await ctx?.close();
});

describe('the OpenAPI document', () => {
  it('lists operations with JSON bodies and query parameters for the walk below', () => {
    expect(JSON_ROUTES.length).toBeGreaterThanOrEqual(20);
    expect(QUERY_ROUTES.map(label)).toEqual(expect.arrayContaining(['GET /api/v1/cables/{id}/attenuation', 'GET /api/v1/usage']));
  });

  it('gives every operation a unique camelCase operationId', () => {
    const opIds = ROUTES.map((r) => r.op.operationId);
    for (const [i, id] of opIds.entries()) expect(id, label(ROUTES[i]!)).toMatch(/^[a-z][a-zA-Z]+$/);
    expect(new Set(opIds).size).toBe(opIds.length);
  });

  it('names a calculation the same in its path, its batch op and the batch schema', () => {
    const calculations = ROUTES.filter((r) => (r.op as { tags?: string[] }).tags?.includes('Calculations')).map((r) => r.path.replace('/api/v1/', ''));
    const ops = (resolve(doc.components.schemas.BatchItem) as { oneOf?: Schema[]; anyOf?: Schema[] }).oneOf!.map((s) => resolve(s).properties!.op!);
    expect(ops.map((o) => (o as { const?: string; enum?: string[] }).const ?? (o as { enum: string[] }).enum[0]).sort()).toEqual([...calculations].sort());
  });
});

describe('a request that does not fit the schema is a 400 naming the field; an uncomputable value is a 422', () => {
  describe.each(JSON_ROUTES.map((r) => [label(r), r] as const))('%s', (_name, r) => {
    const schema = resolve(r.op.requestBody!.content['application/json']!.schema);
    const required = schema.required ?? [];

    it('answers a body without a required field with 400 naming it', async () => {
      const body = validBody(r);
      if (required.length === 0) {
        // Every field is optional on its own (a PATCH, or one input out of several): an empty body lacks them all.
        const errors = expectProblem(await send(r, {}), 400, 'empty body');
        expect(errors.length).toBeGreaterThan(0);
        return;
      }
      for (const field of required) {
        const without = { ...body };
        delete without[field];
        const errors = expectProblem(await send(r, without), 400, `without ${field}`);
        expect(errors.map((e) => e.field)).toContain(field);
      }
    });

    it('answers an unknown field with 400 naming it', async () => {
      const errors = expectProblem(await send(r, { ...validBody(r), notAField: 1 }), 400, 'unknown field');
      expect(errors.map((e) => e.field)).toContain('notAField');
    });

    it('answers a field of the wrong type with 400 naming it', async () => {
      const body = validBody(r);
      for (const field of Object.keys(body)) {
        const errors = expectProblem(await send(r, { ...body, [field]: wrongTypeFor(body[field]) }), 400, `${field} of the wrong type`);
        expect(errors.map((e) => e.field.split('.')[0])).toContain(field);
      }
    });

    if (IMPOSSIBLE[label(r)]) {
      it('answers a physically impossible value with 422 naming it', async () => {
        const { body, field } = IMPOSSIBLE[label(r)]!;
        const errors = expectProblem(await send(r, body), 422, 'impossible value');
        expect(errors.map((e) => e.field)).toContain(field);
      });
    }
  });

  it('covers every calculation with an impossible value', () => {
    const calculations = JSON_ROUTES.filter((r) => (r.op as { tags?: string[] }).tags?.includes('Calculations') || r.path.startsWith('/api/v1/feedlines/{id}/'));
    for (const r of calculations) expect(IMPOSSIBLE[label(r)], label(r)).toBeDefined();
  });

  describe.each(QUERY_ROUTES.map((r) => [label(r), r] as const))('%s', (_name, r) => {
    const base = r.path === '/api/v1/cables/{id}/attenuation' ? { frequencyHz: '14200000' } : {};
    it('answers an unknown query parameter with 400 naming it', async () => {
      const errors = expectProblem(await admin[r.method](urlFor(r)).query({ ...base, notAParameter: '1' }), 400, 'unknown parameter');
      expect(errors.map((e) => e.field)).toContain('notAParameter');
    });
    const numeric = r.op.parameters!.find((p) => p.in === 'query' && [p.schema.type].flat().some((t) => t === 'number' || t === 'integer'));
    if (numeric) {
      it(`answers ${numeric.name} that is not a number with 400 naming it`, async () => {
        const errors = expectProblem(await admin[r.method](urlFor(r)).query({ ...base, [numeric.name]: 'many' }), 400, 'not a number');
        expect(errors.map((e) => e.field)).toContain(numeric.name);
      });
    }
  });

  it('addresses a field inside a line to the field itself, with a hint for a unit spelled another way', async () => {
    const res = await request(ctx.app).post('/api/v1/line').set(ctx.auth).send({ frequencyMHz: 14.2, line: { cableId: 'rg-213', lengthMeters: 30 }, loadOhm: 50 });
    const errors = expectProblem(res, 400, 'misspelled units');
    expect(errors).toEqual(
      expect.arrayContaining([
        { field: 'frequencyMHz', message: 'unknown field; did you mean frequencyHz (hertz)?', hint: 'did you mean frequencyHz (hertz)?' },
        { field: 'line.lengthMeters', message: 'unknown field; did you mean lengthM (metres)?', hint: 'did you mean lengthM (metres)?' },
        { field: 'frequencyHz', message: 'required (number)' },
      ]),
    );
  });

  it('hints at a slip of the keyboard and at a field spelled out, and not at a stranger', async () => {
    const res = await request(ctx.app).post('/api/v1/refer').set(ctx.auth).send({ matchedLossDb: 1, direction: 'inputToLoad', reading: { swr: 1.5 }, matchedLosDb: 2 });
    expect(expectProblem(res, 400, 'slip')).toContainEqual(expect.objectContaining({ field: 'matchedLosDb', hint: 'did you mean matchedLossDb (decibels)?' }));
    const spelled = await request(ctx.app).post('/api/v1/line').set(ctx.auth).send({ frequencyHz: 1e6, line: { cableId: 'rg-213', lengthM: 3 }, loadOhm: { re: 50, imag: 2 } });
    expect(expectProblem(spelled, 400, 'spelled out')).toContainEqual(expect.objectContaining({ field: 'loadOhm.imag', hint: 'did you mean im?' }));
    const stranger = await request(ctx.app).post('/api/v1/mismatch').set(ctx.auth).send({ swr: 1.5, colour: 'red' });
    expect(expectProblem(stranger, 400, 'stranger')).toEqual([{ field: 'colour', message: 'unknown field' }]);
  });

  it('names the parts of a complex value by their usual words, and does not guess from a shared first letter', async () => {
    const res = await request(ctx.app).post('/api/v1/reflection').set(ctx.auth).send({ loadOhm: { re: 50, im: 0, reactance: 3, reference: 50 } });
    const errors = expectProblem(res, 400, 'complex words');
    expect(errors).toContainEqual({ field: 'loadOhm.reactance', message: 'unknown field; did you mean im?', hint: 'did you mean im?' });
    expect(errors).toContainEqual({ field: 'loadOhm.reference', message: 'unknown field' });
  });

  it('lists ten unknown fields of a flood and counts the rest, quickly', async () => {
    const flood = Object.fromEntries(Array.from({ length: 5_000 }, (_, i) => [`unknownField${i}`, i]));
    const res = await request(ctx.app).post('/api/v1/mismatch').set(ctx.auth).send({ swr: 1.5, ...flood, ['x'.repeat(20_000)]: 1 });
    const errors = expectProblem(res, 400, 'flood');
    expect(errors).toHaveLength(11);
    expect(errors[10]).toEqual({ field: '', message: 'and 4991 more unknown fields' });
  });

  it('says a left-out enum is required, and points an old name to its new one', async () => {
    const refer = (body: object) => request(ctx.app).post('/api/v1/refer').set(ctx.auth).send(body);
    expect(expectProblem(await refer({ matchedLossDb: 1, reading: { swr: 1.5 } }), 400, 'no direction')).toEqual([
      { field: 'direction', message: 'required (one of "inputToLoad", "loadToInput")' },
    ]);
    const old = expectProblem(await refer({ matchedLossDb: 1, direction: 'loadToSource', reading: { swr: 1.5 } }), 400, 'old name');
    expect(old).toEqual([expect.objectContaining({ field: 'direction', hint: 'did you mean loadToInput?' })]);
  });

  it('answers the cases an integrator met with the documented statuses', async () => {
    const refer = (body: object) => request(ctx.app).post('/api/v1/refer').set(ctx.auth).send(body);
    expect(expectProblem(await refer({ matchedLossDb: 1, reading: { swr: 1.5 } }), 400, 'no direction').map((e) => e.field)).toEqual(['direction']);
    expect(expectProblem(await refer({ line: { cableId: 'rg-58', lengthM: 30 }, direction: 'inputToLoad', reading: { swr: 1.5 } }), 400, 'no frequency').map((e) => e.field)).toEqual(['frequencyHz']);
    const line = await request(ctx.app).post('/api/v1/line').set(ctx.auth).send({ frequencyHz: 1e6, line: { impedanceOhm: 50, lossDbPer100m: 1, lengthM: 10 }, loadOhm: 50 });
    expect(expectProblem(line, 400, 'no velocity factor').map((e) => e.field)).toEqual(['line.velocityFactor']);
    expect(expectProblem(await refer({ matchedLossDb: -1, direction: 'inputToLoad', reading: { swr: 1.5 } }), 422, 'negative loss').map((e) => e.field)).toEqual(['matchedLossDb']);
  });

  it('applies the same rule, hints and paths inside batch items', async () => {
    const res = await request(ctx.app)
      .post('/api/v1/batch')
      .set(ctx.auth)
      .send({
        items: [
          { op: 'mismatch', input: { swr: 1.5 } },
          { op: 'mismatch', input: { swr: 0.5 } },
          { op: 'line', input: { frequencyMHz: 14.2, line: { cableId: 'rg-213', lengthM: 30 }, loadOhm: 50 } },
          { op: 'line/refer', input: {} },
          { op: 'refer', inputs: {} },
          { op: 'refer', input: { direction: 'sourceToLoad', matchedLossDb: 1, reading: { swr: 2 } } },
        ],
      })
      .expect(200);
    const [ok, low, units, path, key, direction] = res.body.results;
    expect(ok.ok).toBe(true);
    expect(low.problem).toMatchObject({ status: 422, errors: [{ field: 'items.1.input.swr' }] });
    expect(units.problem.status).toBe(400);
    expect(units.problem.errors).toContainEqual({ field: 'items.2.input.frequencyMHz', message: 'unknown field; did you mean frequencyHz (hertz)?', hint: 'did you mean frequencyHz (hertz)?' });
    expect(path.problem).toMatchObject({ status: 400, errors: [{ field: 'items.3.op', hint: 'did you mean refer?' }] });
    expect(key.problem).toMatchObject({ status: 400, errors: [{ field: 'items.4.inputs', hint: 'did you mean input?' }] });
    expect(direction.problem).toMatchObject({ status: 400, errors: [{ field: 'items.5.input.direction' }] });
  });
});

describe('paths and methods', () => {
  it('answers a known path asked with another method with 405, Allow and a problem', async () => {
    const res = await request(ctx.app).get('/api/v1/mismatch').set(ctx.auth);
    expectProblem(res, 405, 'GET /mismatch');
    expect(res.headers.allow).toBe('POST');
    expect(res.body.detail).toContain('/api/v1/mismatch');
    const key = await admin.put(`/api/v1/keys/${ids.keys}`).send({});
    expectProblem(key, 405, 'PUT /keys/{id}');
    expect(key.headers.allow).toBe('GET, HEAD, PATCH, DELETE');
    // A fixed path that also fits a template takes the methods of both.
    const accept = await request(ctx.app).get('/api/v1/invitations/accept');
    expectProblem(accept, 405, 'GET /invitations/accept');
    expect(accept.headers.allow).toBe('POST, DELETE');
    const health = await request(ctx.app).post('/healthz');
    expectProblem(health, 405, 'POST /healthz');
    expect(health.headers.allow).toBe('GET, HEAD');
  });

  it('answers every documented method of a path with something other than 405', async () => {
    for (const r of ROUTES.filter((x) => x.method === 'get' && !x.path.includes('{'))) {
      const res = await admin.get(r.path);
      expect(res.status, label(r)).not.toBe(405);
    }
  });

  it('names the full path asked in every 404', async () => {
    const res = await request(ctx.app).get('/api/v1/no-such-thing?x=1').set(ctx.auth);
    expectProblem(res, 404, 'unknown path');
    expect(res.body.detail).toBe('No route for GET /api/v1/no-such-thing; see /api/v1/openapi.json for the available paths.');
    const other = await request(ctx.app).post('/api/v2/mismatch');
    expect(expectProblem(other, 404, 'v2') && other.body.detail).toContain('POST /api/v2/mismatch');
  });
});

describe('request ids', () => {
  it('answers every request with a Request-Id that is also on its log line', async () => {
    const lines: { reqId?: string; req?: { path: string } }[] = [];
    const sink = new Writable({
      write(chunk, _enc, done) {
        for (const line of String(chunk).split('\n').filter(Boolean)) lines.push(JSON.parse(line));
        done();
      },
    });
    const database = openDatabase('postgres://postgres@127.0.0.1:9/unreachable', { max: 1 });
    const app = createApp({ database, config: testConfig(), logger: pino({ level: 'info' }, sink) });
    try {
      const minted = await request(app).get('/healthz').expect(200);
      const own = await request(app).post('/api/v1/mismatch').set('X-Request-Id', 'rig-7.call-0042').send({});
      expect(own.headers['request-id']).toBe('rig-7.call-0042');
      const problem = await request(app).get('/api/v1/nowhere');
      expect(problem.status).toBe(404);
      await new Promise((resolve) => setImmediate(resolve));
      for (const res of [minted, own, problem]) {
        const id = res.headers['request-id'];
        expect(id).toBeTruthy();
        expect(lines.some((l) => l.reqId === id)).toBe(true);
      }
    } finally {
      await database.close();
    }
  });
});

describe('retiring a part of v1', () => {
  it('announces it on every answer with Deprecation (RFC 9745), Sunset (RFC 8594) and a Link to the changelog', async () => {
    const app = express();
    const since = new Date('2027-01-15T00:00:00Z');
    app.post('/old', announceRetirement({ since, sunset: new Date('2027-07-15T00:00:00Z'), changelog: 'https://gammaline.example/changelog#0.9.0' }), (_req, res) => {
      res.json({ still: 'answers' });
    });
    const res = await request(app).post('/old').expect(200);
    expect(res.body).toEqual({ still: 'answers' });
    // RFC 9745 §2.1 example form: "@" followed by seconds since 1970-01-01T00:00:00Z.
    expect(res.headers.deprecation).toBe(`@${since.getTime() / 1000}`);
    // RFC 8594 §3: an HTTP-date (RFC 9110 §5.6.7, IMF-fixdate).
    expect(res.headers.sunset).toBe('Thu, 15 Jul 2027 00:00:00 GMT');
    expect(res.headers.link).toBe('<https://gammaline.example/changelog#0.9.0>; rel="deprecation"; type="text/markdown"');
  });
});
