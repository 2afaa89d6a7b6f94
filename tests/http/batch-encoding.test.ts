import http from 'node:http';
import type { AddressInfo } from 'node:net';
import { brotliCompressSync, createGzip, deflateSync, gzipSync } from 'node:zlib';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { MAX_NDJSON_DECODED_BYTES } from '../../server/api/v1/batch/batch.encoding.ts';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { utcDay } from '../../server/quota/day.ts';
import { unitsUsed } from '../../server/quota/quota.repository.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// Content codings of a batch body (RFC 9110 §8.4: Content-Encoding; §15.5.16: 415 names the accepted
// codings in Accept-Encoding). A compressed NDJSON body must answer exactly as the same lines sent
// plain, and a decompression bomb must stop at the decoded limit without being inflated further.

let ctx: TestApp;
let server: http.Server;
let port: number;

beforeAll(async () => {
  ctx = await createTestApp();
  server = ctx.app.listen(0, '127.0.0.1');
  await new Promise((resolve) => server.once('listening', resolve));
  port = (server.address() as AddressInfo).port;
});
afterAll(async () => {
  await new Promise((resolve) => server.close(resolve));
  await ctx.close();
});

/** A fresh key of the seeded developer, so each test counts its units from zero. */
async function freshKey(dailyQuota = 100_000): Promise<{ headers: Record<string, string>; used: () => Promise<number> }> {
  const created = await createKey(
    ctx.database.db,
    { organisationId: ctx.seed.organisationId, ownerId: ctx.seed.developerId, name: 'encoding', note: '', dailyQuota, burstPerMinute: 10_000, actor: { userId: ctx.seed.adminId, label: 'test' } },
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

/** Sends a body (whole, or pulled from a generator until the answer has ended) and reads the whole answer. */
function post(
  headers: Record<string, string>,
  body: Buffer | (() => AsyncIterable<Buffer>),
): Promise<{ status: number; headers: http.IncomingHttpHeaders; text: string; bodySent: boolean }> {
  return new Promise((resolve, reject) => {
    let answered = false;
    /** Whether the whole body had been handed to the socket when the answer ended. */
    let bodySent = Buffer.isBuffer(body);
    const req = http.request({ host: '127.0.0.1', port, method: 'POST', path: '/api/v1/batch', headers }, (res) => {
      let text = '';
      res.setEncoding('utf8');
      res.on('data', (c: string) => {
        text += c;
      });
      res.on('end', () => {
        answered = true;
        resolve({ status: res.statusCode ?? 0, headers: res.headers, text, bodySent });
        req.destroy();
      });
      res.on('error', reject);
    });
    req.on('error', (err) => {
      if (!answered) reject(err);
    });
    if (Buffer.isBuffer(body)) {
      req.end(body);
      return;
    }
    void (async () => {
      try {
        for await (const chunk of body()) {
          if (answered || req.destroyed) return;
          if (!req.write(chunk)) await new Promise((r) => req.once('drain', r));
        }
        bodySent = true;
        if (!req.destroyed) req.end();
      } catch {
        // The server answered and closed while the generator was still producing: nothing to do.
      }
    })();
  });
}

function ndjsonLines(text: string): Record<string, unknown>[] {
  expect(text.endsWith('\n')).toBe(true);
  return text
    .slice(0, -1)
    .split('\n')
    .map((l) => JSON.parse(l) as Record<string, unknown>);
}

function job(count: number): string {
  const lines: string[] = [];
  for (let i = 0; i < count; i++) {
    if (i % 7 === 3) lines.push('');
    else if (i % 11 === 5) lines.push('{"op": "mismatch", "input": {"swr": 2}');
    else if (i % 13 === 0) lines.push(JSON.stringify({ op: 'mismatch', input: { swr: 0.5 } }));
    else lines.push(JSON.stringify({ op: 'reflection', input: { loadOhm: { re: 20 + (i % 90), im: -15 } } }));
  }
  // A line over the 64 KB limit, once decoded, answers its own 413 line in both forms.
  lines.splice(40, 0, `{"op":"mismatch","input":{"swr":2},"pad":"${'x'.repeat(70 * 1024)}"}`);
  return `${lines.join('\r\n')}\n`;
}

/** 1 GiB of zeros through gzip, made as it is sent (it compresses to about a thousandth). */
async function* zeroBomb(prefix = ''): AsyncGenerator<Buffer> {
  const gzip = createGzip({ level: 9 });
  const zeros = Buffer.alloc(1024 * 1024);
  const feed = (async () => {
    if (prefix) gzip.write(prefix);
    for (let i = 0; i < 1024 && !gzip.destroyed; i++) {
      if (!gzip.write(zeros)) await new Promise((r) => gzip.once('drain', r));
    }
    gzip.end();
  })();
  try {
    for await (const chunk of gzip as AsyncIterable<Buffer>) yield chunk;
  } finally {
    gzip.destroy();
    await feed.catch(() => undefined);
  }
}

const NDJSON = 'application/x-ndjson';

describe('gzip NDJSON', () => {
  it('answers exactly as the same lines sent plain, for gzip and x-gzip in any case, and charges the same units', async () => {
    const body = job(2_600);
    const plainKey = await freshKey();
    const plain = await post({ ...plainKey.headers, 'Content-Type': NDJSON }, Buffer.from(body));
    expect(plain.status).toBe(200);
    const plainLines = ndjsonLines(plain.text);
    expect(plainLines.at(-1)).toMatchObject({ end: 'complete' });
    expect(plainLines.find((l) => l.line === 41)).toMatchObject({ ok: false, problem: { status: 413 } });

    for (const encoding of ['gzip', 'x-gzip', 'GZip']) {
      const key = await freshKey();
      const zipped = await post({ ...key.headers, 'Content-Type': NDJSON, 'Content-Encoding': encoding }, gzipSync(body));
      expect(zipped.status, encoding).toBe(200);
      expect(zipped.headers['content-type']).toMatch(/^application\/x-ndjson/);
      expect(ndjsonLines(zipped.text)).toEqual(plainLines);
      expect(await key.used()).toBe(await plainKey.used());
    }
    const identity = await post({ ...(await freshKey()).headers, 'Content-Type': NDJSON, 'Content-Encoding': 'identity' }, Buffer.from(body));
    expect(ndjsonLines(identity.text)).toEqual(plainLines);
  });

  it(`refuses a decompression bomb with 413 once it decodes past ${MAX_NDJSON_DECODED_BYTES} bytes, in bounded memory, charging nothing`, async () => {
    const key = await freshKey();
    const rssBefore = process.memoryUsage().rss;
    // Had the server inflated past its limit, it would have answered only after the client sent all of 1 GiB.
    const res = await post({ ...key.headers, 'Content-Type': NDJSON, 'Content-Encoding': 'gzip' }, () => zeroBomb());
    expect(res.status).toBe(413);
    expect(res.bodySent).toBe(false);
    expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    const problem = JSON.parse(res.text) as { type: string; detail: string };
    expect(problem.type).toBe('urn:gammaline:problem:payload-too-large');
    expect(problem.detail).toContain(String(MAX_NDJSON_DECODED_BYTES));
    // Loose: the decoded bytes pass in pieces of tens of KB and are dropped (one line is kept to 64 KB);
    // a buffered gigabyte would show here many times over.
    expect(process.memoryUsage().rss - rssBefore).toBeLessThan(200 * 1024 * 1024);
    expect(await key.used()).toBe(0);
  });

  it('stops a stream whose body turns into a bomb after the answer started with an end line (413, nextLine), charging only the lines computed', async () => {
    const key = await freshKey();
    const lines = `${'{"op":"mismatch","input":{"swr":2}}\n'.repeat(1_500)}`;
    const res = await post({ ...key.headers, 'Content-Type': NDJSON, 'Content-Encoding': 'gzip' }, () => zeroBomb(lines));
    expect(res.status).toBe(200);
    expect(res.bodySent).toBe(false);
    const out = ndjsonLines(res.text);
    // The first block of 1,000 lines was computed; the next one never ended before the limit.
    expect(out).toHaveLength(1_001);
    expect(out[1_000]).toMatchObject({ end: 'stopped', nextLine: 1_001, problem: { status: 413 }, summary: { items: 1_000, unitsCharged: 1_000 } });
    expect(await key.used()).toBe(1_000);
  });

  it('refuses corrupt gzip with a 400 problem before charging, and a body cut short mid-stream with a 400 end line', async () => {
    const key = await freshKey();
    const garbage = await post({ ...key.headers, 'Content-Type': NDJSON, 'Content-Encoding': 'gzip' }, Buffer.from('{"op":"mismatch","input":{"swr":2}}\n'));
    expect(garbage.status).toBe(400);
    expect(JSON.parse(garbage.text)).toMatchObject({ status: 400, detail: expect.stringMatching(/not valid gzip/) });
    const zipped = gzipSync('{"op":"mismatch","input":{"swr":2}}\n'.repeat(10));
    const damaged = Buffer.from(zipped);
    damaged.fill(0xff, 12, zipped.length - 8);
    expect((await post({ ...key.headers, 'Content-Type': NDJSON, 'Content-Encoding': 'gzip' }, damaged)).status).toBe(400);
    expect(await key.used()).toBe(0);

    // Varied lines, so the compressed body is long enough to cut well after the first block.
    const many = Array.from({ length: 3_000 }, (_, i) => JSON.stringify({ op: 'mismatch', input: { swr: 1 + i / 997 } })).join('\n');
    const whole = gzipSync(`${many}\n`);
    const cut = await post({ ...key.headers, 'Content-Type': NDJSON, 'Content-Encoding': 'gzip' }, whole.subarray(0, Math.floor(whole.length * 0.8)));
    expect(cut.status).toBe(200);
    const out = ndjsonLines(cut.text);
    const end = out.at(-1)!;
    expect(end).toMatchObject({ end: 'stopped', problem: { status: 400 } });
    const computed = (end.summary as { items: number }).items;
    expect(computed % 1_000).toBe(0);
    expect(computed).toBeGreaterThanOrEqual(1_000);
    expect(end.nextLine).toBe(computed + 1);
    expect(await key.used()).toBe(computed);
  });

  it('refuses any other content coding with 415 naming the accepted ones, before charging', async () => {
    const key = await freshKey();
    const body = '{"op":"mismatch","input":{"swr":2}}\n';
    const cases: [string, Buffer][] = [
      ['deflate', deflateSync(body)],
      ['br', brotliCompressSync(body)],
      ['compress', Buffer.from(body)],
      ['zstd', Buffer.from(body)],
      ['gzip, identity', gzipSync(body)],
      ['identity, gzip', gzipSync(body)],
    ];
    for (const [encoding, encoded] of cases) {
      const res = await post({ ...key.headers, 'Content-Type': NDJSON, 'Content-Encoding': encoding }, encoded);
      expect(res.status, encoding).toBe(415);
      expect(res.headers['accept-encoding']).toBe('gzip');
      expect(JSON.parse(res.text)).toMatchObject({ type: 'urn:gammaline:problem:unsupported-media-type', detail: expect.stringMatching(/gzip.*identity/) });
    }
    expect(await key.used()).toBe(0);
  });
});

describe('compressed JSON batches (decoded by the JSON body reader, as on every JSON route)', () => {
  const body = JSON.stringify({ items: [{ op: 'mismatch', input: { swr: 2 } }, { op: 'mismatch', input: { swr: 3 } }] });

  it('accepts gzip, deflate and br and answers as the plain body does', async () => {
    const plain = await request(ctx.app).post('/api/v1/batch').set(ctx.auth).set('Content-Type', 'application/json').send(body).expect(200);
    for (const [encoding, encoded] of [['gzip', gzipSync(body)], ['deflate', deflateSync(body)], ['br', brotliCompressSync(body)]] as const) {
      const res = await post({ ...ctx.auth, 'Content-Type': 'application/json', 'Content-Encoding': encoding }, encoded);
      expect(res.status, encoding).toBe(200);
      expect(JSON.parse(res.text)).toEqual(plain.body);
    }
  });

  it('applies the 16 MB limit to the decoded body (413), refuses corrupt data (400) and other codings (415), charging nothing', async () => {
    const key = await freshKey();
    const bomb = await post({ ...key.headers, 'Content-Type': 'application/json', 'Content-Encoding': 'gzip' }, () => zeroBomb());
    expect(bomb.status).toBe(413);
    expect((await post({ ...key.headers, 'Content-Type': 'application/json', 'Content-Encoding': 'gzip' }, Buffer.from(body))).status).toBe(400);
    expect((await post({ ...key.headers, 'Content-Type': 'application/json', 'Content-Encoding': 'x-gzip' }, gzipSync(body))).status).toBe(415);
    expect(await key.used()).toBe(0);
  });
});
