import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CALCULATIONS, type Calculation } from '../../shared/calculations/table.ts';
import { BatchItemSchema } from '../../shared/schemas/batch.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// The calculations table is the only list of calculations: each entry must come out as a route, an
// OpenAPI operation and a batch op that answer alike. A new entry gets all three or this file fails.

const entries = CALCULATIONS as readonly Calculation[];

/** The request schema's documented example: the body /docs shows for the calculation. */
function exampleOf(calc: Calculation): unknown {
  const example = (calc.request.meta() as { example?: unknown } | undefined)?.example;
  if (example === undefined) throw new Error(`${calc.name}: the request schema has no example; give it one in .meta({ example })`);
  return example;
}

let ctx: TestApp;

beforeAll(async () => {
  ctx = await createTestApp();
});
afterAll(async () => {
  await ctx.close();
});

describe.each(entries.map((c) => [c.name, c] as const))('the calculation %s', (name, calc) => {
  it('is documented at POST /api/v1/<name> with its operationId', async () => {
    const doc = (await request(ctx.app).get('/api/v1/openapi.json').expect(200)).body as { paths: Record<string, { post?: { operationId?: string } }> };
    expect(doc.paths[`/api/v1/${name}`]?.post?.operationId).toBe(calc.operationId);
  });

  it('is a batch op whose item schema takes the endpoint body', () => {
    expect(BatchItemSchema.safeParse({ op: name, input: exampleOf(calc) }).success).toBe(true);
  });

  it('answers its example the same from its route and as a JSON batch item and NDJSON line', async () => {
    const input = exampleOf(calc);
    const single = await request(ctx.app).post(`/api/v1/${name}`).set(ctx.auth).send(input as object).expect(200);
    const batch = await request(ctx.app).post('/api/v1/batch').set(ctx.auth).send({ items: [{ op: name, input }] }).expect(200);
    expect(batch.body.results).toEqual([{ ok: true, output: single.body }]);
    const stream = await request(ctx.app)
      .post('/api/v1/batch')
      .set(ctx.auth)
      .set('Content-Type', 'application/x-ndjson')
      .send(`${JSON.stringify({ op: name, input })}\n`)
      .expect(200);
    expect(JSON.parse(stream.text.split('\n')[0]!)).toEqual({ line: 1, ok: true, output: single.body });
  });
});

describe('a result outside double precision', () => {
  // A standing-wave ratio of 1e308 / 1e-300 overflows to Infinity, which JSON would send as null.
  const input = { maxVoltageV: 1e308, minVoltageV: 1e-300 };
  const problem = {
    type: 'urn:gammaline:problem:unprocessable',
    title: 'The input cannot be computed',
    status: 422,
    detail: 'The inputs lead to a result outside double-precision range; check their units and magnitudes.',
  };

  it('is a 422 problem from the route, without field errors', async () => {
    const res = await request(ctx.app).post('/api/v1/mismatch').set(ctx.auth).send(input).expect(422);
    expect(res.body).toEqual({ ...problem, instance: '/api/v1/mismatch' });
  });

  it('is the same problem for a batch item', async () => {
    const res = await request(ctx.app).post('/api/v1/batch').set(ctx.auth).send({ items: [{ op: 'mismatch', input }] }).expect(200);
    expect(res.body.results).toEqual([{ ok: false, problem }]);
  });
});
