import { readFileSync } from 'node:fs';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { OPENAPI_FILE, serializeOpenApi } from '../../server/openapi/write.ts';
import { createAppWithoutDatabase, createTestApp } from '../helpers/app.ts';

// RFC 9457 §3 (problem details members) and §6.1 (application/problem+json) are the reference for these shapes.
const PROBLEM = /application\/problem\+json/;

describe('the platform', () => {
  let ctx: Awaited<ReturnType<typeof createTestApp>>;
  beforeAll(async () => {
    ctx = await createTestApp();
  });
  afterAll(async () => {
    await ctx.close();
  });

  describe('service endpoints answer', () => {
    it('reports the process alive on /healthz', async () => {
      const res = await request(ctx.app).get('/healthz').expect(200);
      expect(res.body).toMatchObject({ status: 'ok', version: expect.any(String) });
      expect(res.body.uptimeS).toBeGreaterThanOrEqual(0);
    });

    it('reports the database reachable on /readyz', async () => {
      const res = await request(ctx.app).get('/readyz').expect(200);
      expect(res.body).toEqual({ status: 'ready', database: 'up' });
    });

    it('echoes a safe caller request id in Request-Id and mints one otherwise', async () => {
      const own = await request(ctx.app).get('/healthz').set('X-Request-Id', 'abc-123');
      expect(own.headers['request-id']).toBe('abc-123');
      const plain = await request(ctx.app).get('/healthz').set('Request-Id', 'logbook.42');
      expect(plain.headers['request-id']).toBe('logbook.42');
      const minted = await request(ctx.app).get('/healthz').set('X-Request-Id', 'bad id with spaces');
      expect(minted.headers['request-id']).toMatch(/^[0-9a-f-]{36}$/);
      const tooLong = await request(ctx.app).get('/healthz').set('X-Request-Id', 'x'.repeat(65));
      expect(tooLong.headers['request-id']).toMatch(/^[0-9a-f-]{36}$/);
      expect(own.headers['x-request-id']).toBeUndefined();
    });

    it('sends the helmet security headers', async () => {
      const res = await request(ctx.app).get('/healthz');
      expect(res.headers['x-content-type-options']).toBe('nosniff');
      expect(res.headers['content-security-policy']).toBeDefined();
      expect(res.headers['x-powered-by']).toBeUndefined();
    });
  });

  describe('errors are RFC 9457 problems', () => {
    it('answers an unknown API route with a 404 problem', async () => {
      const res = await request(ctx.app).get('/api/v1/no-such-thing').expect(404);
      expect(res.headers['content-type']).toMatch(PROBLEM);
      expect(res.body).toMatchObject({ status: 404, title: 'Not found', type: 'urn:gammaline:problem:not-found', instance: '/api/v1/no-such-thing' });
    });

    it('answers malformed JSON with a 400 problem', async () => {
      const res = await request(ctx.app).post('/api/v1/anything').set('Content-Type', 'application/json').send('{"swr": 1.5,').expect(400);
      expect(res.headers['content-type']).toMatch(PROBLEM);
      expect(res.body.type).toBe('urn:gammaline:problem:malformed-json');
    });

    it('answers an oversized body with a 413 problem', async () => {
      const big = JSON.stringify({ pad: 'x'.repeat(3 * 1024 * 1024) });
      const res = await request(ctx.app).post('/api/v1/anything').set('Content-Type', 'application/json').send(big).expect(413);
      expect(res.headers['content-type']).toMatch(PROBLEM);
      expect(res.body.detail).toMatch(/limit/);
    });
  });

  describe('the OpenAPI description', () => {
    it('is served as OpenAPI 3.1 at /api/v1/openapi.json', async () => {
      const res = await request(ctx.app).get('/api/v1/openapi.json').expect(200);
      expect(res.body.openapi).toBe('3.1.0');
      expect(res.body.paths['/readyz']).toBeDefined();
      expect(res.body.components.schemas.Problem).toBeDefined();
    });

    it('matches the committed openapi/openapi.json (run `npm run openapi` after changing a schema)', () => {
      expect(readFileSync(OPENAPI_FILE, 'utf8')).toBe(serializeOpenApi());
    });

    it('lists the 415 and 400 answers the code gives to every JSON route sent text or the wrong shape', async () => {
      const doc = (await request(ctx.app).get('/api/v1/openapi.json').expect(200)).body as {
        paths: Record<string, Record<string, { requestBody?: { content: Record<string, unknown> }; responses: Record<string, unknown> }>>;
      };
      const admin = await ctx.adminAgent();
      const undocumented: string[] = [];
      for (const [path, item] of Object.entries(doc.paths)) {
        for (const [method, op] of Object.entries(item)) {
          if (!op.requestBody?.content['application/json']) continue;
          const url = path.replace(/\{[^}]+\}/g, '00000000-0000-4000-8000-000000000000');
          const send = (body: string, type: string) => (admin as unknown as Record<string, (u: string) => request.Test>)[method]!(url).set('Content-Type', type).send(body);
          for (const [body, type] of [['x=1', 'text/plain'], ['[1]', 'application/json'], ['{"unknownField":1}', 'application/json']]) {
            const res = await send(body!, type!);
            if (!(String(res.status) in op.responses)) undocumented.push(`${method.toUpperCase()} ${path} ${type} ${body}: ${res.status}`);
          }
        }
      }
      expect(undocumented).toEqual([]);
    });

    it('lists the 422 and 400 answers for values out of range, and 400 for a path parameter out of range', async () => {
      const doc = (await request(ctx.app).get('/api/v1/openapi.json').expect(200)).body as { paths: Record<string, Record<string, { responses: Record<string, unknown> }>> };
      const line = { impedanceOhm: 50, velocityFactor: 0.66, lossDbPer100m: 2, lengthM: -1 };
      const cases: [method: 'get' | 'post', template: string, url: string, body: unknown, status: number][] = [
        ['post', '/api/v1/mismatch', '/api/v1/mismatch', { swr: 0.5 }, 422],
        ['post', '/api/v1/line', '/api/v1/line', { frequencyHz: 7e6, line, loadOhm: 50 }, 422],
        ['post', '/api/v1/batch', '/api/v1/batch', { items: [] }, 422],
        ['get', '/api/v1/cables/{id}/attenuation', '/api/v1/cables/rg-213/attenuation?frequencyHz=-1', undefined, 422],
        ['get', '/api/v1/cables/{id}', `/api/v1/cables/${'x'.repeat(101)}`, undefined, 400],
      ];
      for (const [method, template, url, body, status] of cases) {
        const res = method === 'get' ? await request(ctx.app).get(url).set(ctx.auth) : await request(ctx.app).post(url).set(ctx.auth).send(body as object);
        expect(`${template} ${res.status}`).toBe(`${template} ${status}`);
        expect(Object.keys(doc.paths[template]![method]!.responses)).toContain(String(status));
      }
    });

    it('is rendered for people at /docs', async () => {
      const res = await request(ctx.app).get('/docs/').expect(200);
      expect(res.text).toContain('swagger-ui');
    });
  });
});

describe('when the database is down', () => {
  it('answers /readyz with a 503 problem and Retry-After, and /healthz still 200', async () => {
    const down = createAppWithoutDatabase();
    try {
      const res = await request(down.app).get('/readyz').expect(503);
      expect(res.headers['content-type']).toMatch(PROBLEM);
      expect(res.headers['retry-after']).toBe('5');
      await request(down.app).get('/healthz').expect(200);
    } finally {
      await down.close();
    }
  });
});
