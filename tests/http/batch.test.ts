import http from 'node:http';
import type { AddressInfo } from 'node:net';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { utcDay } from '../../server/quota/day.ts';
import { unitsUsed } from '../../server/quota/quota.repository.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// Expected figures: SWR = (1 + |Γ|)/(1 − |Γ|) and the single endpoints' own answers (a batch item must
// equal the single call exactly). Quota rules are the product's: one unit per item, refused whole.

let ctx: TestApp;

beforeAll(async () => {
  ctx = await createTestApp();
});
afterAll(async () => {
  await ctx.close();
});

/** A fresh key of the seeded developer with its own daily quota, so each test counts from zero. */
async function keyWithQuota(dailyQuota: number): Promise<{ headers: Record<string, string>; used: () => Promise<number> }> {
  const created = await createKey(
    ctx.database.db,
    { organisationId: ctx.seed.organisationId, ownerId: ctx.seed.developerId, name: `quota ${dailyQuota}`, note: '', dailyQuota, burstPerMinute: 10_000, actor: { userId: ctx.seed.adminId, label: 'test' } },
    new Date(),
  );
  return {
    headers: { Authorization: `Bearer ${created.secret}` },
    used: async () => {
      await ctx.settle();
      return unitsUsed(ctx.database.db, created.key.id, utcDay(new Date()));
    },
  };
}

/** Item i of a mixed job: every 10th has a value out of range, every 10th + 1 an unknown op, the rest cycle through the operations. */
function mixedItem(i: number): { op: string; input: Record<string, unknown> } {
  if (i % 10 === 0) return { op: 'mismatch', input: { swr: 0.5 } };
  if (i % 10 === 1) return { op: 'impedance', input: {} };
  switch (i % 5) {
    case 0:
      return { op: 'line', input: { frequencyHz: 14_200_000, line: { cableId: 'rg-213', lengthM: 10 + (i % 50) }, loadOhm: { re: 72, im: 18 } } };
    case 1:
      return { op: 'reflection', input: { loadOhm: { re: 50 + (i % 100), im: -20 } } };
    case 2:
      return { op: 'refer', input: { matchedLossDb: 1.2, direction: 'inputToLoad', reading: { swr: 1.5 } } };
    case 3:
      return { op: 'match', input: { frequencyHz: 3_650_000, loadOhm: { re: 12, im: -30 } } };
    default:
      return { op: 'mismatch', input: { swr: 1 + i / 10_000 } };
  }
}

type Outcome = { ok: boolean; output?: Record<string, unknown>; problem?: { status: number; errors: { field: string }[] } };

describe('JSON batches', () => {
  it('answers 10,000 mixed items in order, each good one exactly as its single endpoint, each bad one with its own problem', async () => {
    const key = await keyWithQuota(10_000);
    const items = Array.from({ length: 10_000 }, (_, i) => mixedItem(i));
    // Pretty-printed on purpose: well over the 2 MB app-wide limit, within the batch route's own.
    const body = JSON.stringify({ items }, null, 8);
    expect(body.length).toBeGreaterThan(2 * 1024 * 1024);
    const res = await request(ctx.app).post('/api/v1/batch').set(key.headers).set('Content-Type', 'application/json').send(body).expect(200);
    const results = res.body.results as Outcome[];
    expect(results).toHaveLength(10_000);
    results.forEach((r, i) => {
      if (i % 10 === 0) {
        expect(r.problem).toMatchObject({ status: 422, errors: [{ field: `items.${i}.input.swr` }] });
      } else if (i % 10 === 1) {
        expect(r.problem).toMatchObject({ status: 400, errors: [{ field: `items.${i}.op` }] });
      } else {
        expect(r.ok).toBe(true);
      }
      // Order: mismatch items echo their own SWR.
      if (i % 5 === 4 && i % 10 > 1) expect(r.output!.swr).toBeCloseTo(1 + i / 10_000, 12);
    });
    for (const i of [2, 3, 4, 5, 6]) {
      const item = items[i]!;
      const path = { mismatch: '/mismatch', reflection: '/reflection', line: '/line', refer: '/refer', match: '/match' }[item.op as 'line'];
      const single = await request(ctx.app).post(`/api/v1${path}`).set(ctx.auth).send(item.input).expect(200);
      expect(results[i]!.output).toEqual(single.body);
    }
    expect(await key.used()).toBe(10_000);
  });

  it('answers a small batch in one piece with its Content-Length, a big one in pieces that parse as one document', async () => {
    const key = await keyWithQuota(2_000);
    const small = await request(ctx.app).post('/api/v1/batch').set(key.headers).send({ items: [{ op: 'mismatch', input: { swr: 2 } }] }).expect(200);
    expect(Number(small.headers['content-length'])).toBe(Buffer.byteLength(small.text));
    expect(small.body.results).toEqual([{ ok: true, output: expect.objectContaining({ swr: 2 }) }]);
    // 1,500 items cross both the ~50 KB pieces and a yield to the event loop.
    const items = Array.from({ length: 1_500 }, (_, i) => ({ op: 'mismatch', input: { swr: 1 + i / 1_000 } }));
    const big = await request(ctx.app).post('/api/v1/batch').set(key.headers).send({ items }).expect(200);
    const results = big.body.results as Outcome[];
    expect(results).toHaveLength(1_500);
    results.forEach((r, i) => expect(r.output!.swr).toBeCloseTo(1 + i / 1_000, 12));
  });

  it('refuses a batch that does not fit the remaining quota whole (429) before any work, spending nothing', async () => {
    const key = await keyWithQuota(9_999);
    const items = Array.from({ length: 10_000 }, () => ({ op: 'mismatch', input: { swr: 2 } }));
    const res = await request(ctx.app).post('/api/v1/batch').set(key.headers).send({ items }).expect(429);
    expect(res.headers['retry-after']).toBeDefined();
    expect(res.body.detail).toMatch(/10000 units/);
    expect(res.body.results).toBeUndefined();
    expect(await key.used()).toBe(0);
    await request(ctx.app).post('/api/v1/batch').set(key.headers).send({ items: items.slice(0, 9_999) }).expect(200);
    expect(await key.used()).toBe(9_999);
  });

  it('addresses problems from the request root and keeps the fields of the single endpoint', async () => {
    const res = await request(ctx.app)
      .post('/api/v1/batch')
      .set(ctx.auth)
      .send({ items: [{ op: 'line', input: { frequencyHz: 7e6, line: { cableId: 'rg-999', lengthM: 5 }, loadOhm: 50 } }, { op: 'line', input: { frequencyHz: 7e6 } }, 'text', { op: 'mismatch', input: { swr: 2 }, extra: 1 }, { op: 'mismatch' }] })
      .expect(200);
    const [unknownCable, missing, text, extra, noInput] = res.body.results as Outcome[];
    expect(unknownCable!.problem).toMatchObject({ status: 422, errors: [{ field: 'items.0.input.line.cableId' }] });
    expect(missing!.problem!.status).toBe(400);
    expect(missing!.problem!.errors.map((e) => e.field)).toEqual(expect.arrayContaining(['items.1.input.line', 'items.1.input.loadOhm']));
    expect(text!.problem).toMatchObject({ status: 400, errors: [{ field: 'items.2' }] });
    expect(extra!.problem).toMatchObject({ errors: [{ field: 'items.3.extra' }] });
    expect(noInput!.problem).toMatchObject({ errors: [{ field: 'items.4.input' }] });
  });

  it('refuses an empty batch, too many items and a body that is not JSON, without spending units', async () => {
    const key = await keyWithQuota(100);
    await request(ctx.app).post('/api/v1/batch').set(key.headers).send({ items: [] }).expect(422);
    const tooMany = await request(ctx.app)
      .post('/api/v1/batch')
      .set(key.headers)
      .send({ items: Array.from({ length: 20_001 }, () => ({ op: 'mismatch', input: { swr: 2 } })) })
      .expect(422);
    expect(tooMany.body.detail).toMatch(/NDJSON/);
    await request(ctx.app).post('/api/v1/batch').set(key.headers).set('Content-Type', 'application/json').send('{"items": [').expect(400);
    await request(ctx.app).post('/api/v1/batch').set(key.headers).set('Content-Type', 'text/plain').send('mismatch swr 2').expect(415);
    expect(await key.used()).toBe(0);
  });

  it('answers 413 for a JSON body over the batch limit', async () => {
    const res = await request(ctx.app).post('/api/v1/batch').set(ctx.auth).set('Content-Type', 'application/json').send(`{"items":["${'x'.repeat(17 * 1024 * 1024)}"]}`).expect(413);
    expect(res.body.detail).toMatch(/NDJSON|split/);
  });

  it('needs a key or a session', async () => {
    await request(ctx.app).post('/api/v1/batch').send({ items: [{ op: 'mismatch', input: { swr: 2 } }] }).expect(401);
  });
});

/** Lines of an NDJSON answer, parsed. */
function ndjson(text: string): Record<string, unknown>[] {
  expect(text.endsWith('\n')).toBe(true);
  return text
    .slice(0, -1)
    .split('\n')
    .map((l) => JSON.parse(l) as Record<string, unknown>);
}

/** superagent hands the raw response stream to a custom parser; NDJSON is kept as text. */
function asText(res: request.Response, cb: (err: Error | null, body: string) => void): void {
  const stream = res as unknown as NodeJS.ReadableStream;
  let data = '';
  stream.setEncoding('utf8');
  stream.on('data', (c: string) => {
    data += c;
  });
  stream.on('end', () => cb(null, data));
}

function postNdjson(headers: Record<string, string>, body: string) {
  return request(ctx.app).post('/api/v1/batch').set(headers).set('Content-Type', 'application/x-ndjson').buffer(true).parse(asText).send(body);
}

describe('NDJSON streams', () => {
  it('answers one line per non-blank input line, in order, with problem lines for bad ones, and a closing summary', async () => {
    const key = await keyWithQuota(100_000);
    const lines: string[] = [];
    for (let i = 0; i < 3_000; i++) lines.push(JSON.stringify(mixedItem(i)));
    lines.splice(10, 0, '');
    lines.splice(20, 0, '{"op": "mismatch", "input": {"swr": 2}');
    lines.splice(30, 0, `{"op":"mismatch","input":{"swr":2},"pad":"${'x'.repeat(70 * 1024)}"}`);
    lines.splice(2_500, 0, '   ');
    const res = await postNdjson(key.headers, `${lines.join('\r\n')}\n`).expect(200);
    expect(res.headers['content-type']).toMatch(/^application\/x-ndjson/);
    const out = ndjson(res.body as string);
    const nonBlank = lines.map((l, i) => ({ l, lineNo: i + 1 })).filter(({ l }) => l.trim() !== '');
    expect(out).toHaveLength(nonBlank.length + 1);
    nonBlank.forEach(({ lineNo }, k) => expect(out[k]!.line).toBe(lineNo));
    expect(out[19]).toMatchObject({ line: 21, ok: false, problem: { status: 400, type: 'urn:gammaline:problem:malformed-json' } });
    expect(out[29]).toMatchObject({ line: 31, ok: false, problem: { status: 413 } });
    // The first mixed item (i = 0) is out of range; the field is addressed from the line's root.
    expect(out[0]).toMatchObject({ line: 1, ok: false, problem: { status: 422, errors: [{ field: 'input.swr' }] } });
    expect(out[2]).toMatchObject({ line: 3, ok: true });
    const end = out[out.length - 1]!;
    expect(end).toMatchObject({ end: 'complete', summary: { items: 3_002, unitsCharged: 3_002 } });
    const summary = end.summary as { succeeded: number; failed: number };
    expect(summary.succeeded + summary.failed).toBe(3_002);
    expect(await key.used()).toBe(3_002);
  });

  it('ends with a 429 problem line when the quota runs out mid-stream, having charged exactly the items it computed', async () => {
    const key = await keyWithQuota(2_500);
    const lines = Array.from({ length: 4_000 }, (_, i) => JSON.stringify({ op: 'mismatch', input: { swr: 1 + i / 1000 } }));
    const res = await postNdjson(key.headers, `${lines.join('\n')}\n`).expect(200);
    const out = ndjson(res.body as string);
    expect(out).toHaveLength(2_501);
    expect(out[2_499]).toMatchObject({ line: 2_500, ok: true, output: { swr: expect.closeTo(1 + 2_499 / 1000, 12) } });
    expect(out[2_500]).toMatchObject({ end: 'stopped', nextLine: 2_501, problem: { status: 429 }, summary: { items: 2_500, unitsCharged: 2_500 } });
    expect((out[2_500]!.problem as { detail: string }).detail).toMatch(/Lines from 2501 on were not computed/);
    expect(await key.used()).toBe(2_500);
  });

  it('answers a plain 429 problem when no quota is left at the start', async () => {
    const key = await keyWithQuota(3);
    await postNdjson(key.headers, '{"op":"mismatch","input":{"swr":2}}\n'.repeat(3)).expect(200);
    const res = await request(ctx.app).post('/api/v1/batch').set(key.headers).set('Content-Type', 'application/x-ndjson').send('{"op":"mismatch","input":{"swr":2}}\n').expect(429);
    expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    expect(res.headers['retry-after']).toBeDefined();
    expect(await key.used()).toBe(3);
  });

  it('computes what the remaining quota pays for when the first block does not fit', async () => {
    const key = await keyWithQuota(5);
    const res = await postNdjson(key.headers, '{"op":"mismatch","input":{"swr":2}}\n'.repeat(8)).expect(200);
    const out = ndjson(res.body as string);
    expect(out).toHaveLength(6);
    expect(out[5]).toMatchObject({ end: 'stopped', nextLine: 6, problem: { status: 429 } });
    expect(await key.used()).toBe(5);
  });

  it('refuses an empty stream without spending a unit', async () => {
    const key = await keyWithQuota(10);
    await request(ctx.app).post('/api/v1/batch').set(key.headers).set('Content-Type', 'application/x-ndjson').send('\n\n').expect(400);
    expect(await key.used()).toBe(0);
  });

  it('lets a client that is still sending finish cleanly after the quota stopped the stream', async () => {
    const key = await keyWithQuota(1_500);
    const server = ctx.app.listen(0, '127.0.0.1');
    await new Promise((resolve) => server.once('listening', resolve));
    try {
      const { port } = server.address() as AddressInfo;
      const line = '{"op":"mismatch","input":{"swr":2}}\n';
      const { status, body } = await new Promise<{ status: number; body: string }>((resolve, reject) => {
        const req = http.request({ host: '127.0.0.1', port, method: 'POST', path: '/api/v1/batch', headers: { ...key.headers, 'Content-Type': 'application/x-ndjson' } }, (res) => {
          let text = '';
          res.setEncoding('utf8');
          res.on('data', (c: string) => {
            text += c;
          });
          res.on('end', () => resolve({ status: res.statusCode ?? 0, body: text }));
        });
        req.on('error', reject);
        let sent = 0;
        const pump = () => {
          while (sent < 40) {
            sent++;
            if (!req.write(line.repeat(1_000))) {
              req.once('drain', pump);
              return;
            }
          }
          req.end();
        };
        pump();
      });
      expect(status).toBe(200);
      const out = ndjson(body);
      expect(out).toHaveLength(1_501);
      expect(out[1_500]).toMatchObject({ end: 'stopped', nextLine: 1_501 });
      expect(await key.used()).toBe(1_500);
    } finally {
      await new Promise((resolve) => server.close(resolve));
    }
  });

  it('starts answering before the request has ended (streaming, not buffering)', async () => {
    const server = ctx.app.listen(0, '127.0.0.1');
    await new Promise((resolve) => server.once('listening', resolve));
    try {
      const { port } = server.address() as AddressInfo;
      const line = '{"op":"reflection","input":{"loadOhm":{"re":75,"im":10}}}\n';
      const received: string[] = [];
      const done = new Promise<{ status: number; body: string }>((resolve, reject) => {
        const req = http.request({ host: '127.0.0.1', port, method: 'POST', path: '/api/v1/batch', headers: { ...ctx.auth, 'Content-Type': 'application/x-ndjson' } }, (res) => {
          res.setEncoding('utf8');
          res.on('data', (chunk: string) => {
            received.push(chunk);
            // Only once the first block came back is the rest of the job sent.
            if (received.length === 1) req.end(line.repeat(1_500));
          });
          res.on('end', () => resolve({ status: res.statusCode ?? 0, body: received.join('') }));
          res.on('error', reject);
        });
        req.on('error', reject);
        req.write(line.repeat(1_000));
      });
      const { status, body } = await done;
      expect(status).toBe(200);
      const out = ndjson(body);
      expect(out).toHaveLength(2_501);
      expect(out[2_500]).toMatchObject({ end: 'complete', summary: { items: 2_500, succeeded: 2_500 } });
    } finally {
      await new Promise((resolve) => server.close(resolve));
    }
  });
});
