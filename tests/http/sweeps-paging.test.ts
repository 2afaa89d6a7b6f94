import { monitorEventLoopDelay } from 'node:perf_hooks';
import request from 'supertest';
import type TestAgent from 'supertest/lib/agent.js';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestApp, type TestApp } from '../helpers/app.ts';
import { listen } from '../helpers/live-server.ts';

// A 100,000-point sweep (the per-sweep limit) read back in pages and as streams, and what reads cost.
// The file is an invented impedance sweep in Touchstone `# Hz Z RI R 50` form (Touchstone File Format
// Specification, Version 2.0, § Option Line; heading from memory). Bounds on memory and event-loop
// delay are loose on purpose: they tell a streamed, off-loop implementation from one that builds the
// whole answer or parses on the event loop, not a speed target (those live in the benchmark, P6).

const POINTS = 100_000;
const frequencyOf = (i: number) => 1_000_000 + i * 100;

function bigTouchstone(): Buffer {
  const lines = ['! invented test sweep', '# Hz Z RI R 50'];
  for (let i = 0; i < POINTS; i++) lines.push(`${frequencyOf(i)} ${(50 + 20 * Math.sin(i / 500)).toFixed(6)} ${(30 * Math.cos(i / 700)).toFixed(6)}`);
  return Buffer.from(`${lines.join('\n')}\n`);
}

let ctx: TestApp;
let live: Awaited<ReturnType<typeof listen>>;
let admin: TestAgent;
let sweepId: string;
let uploadDelayMaxMs: number;

beforeAll(async () => {
  ctx = await createTestApp();
  live = await listen(ctx.app);
  admin = await ctx.adminAgent();
  const file = bigTouchstone();
  // The upload is measured from here: the event loop of this process is the server's.
  const delay = monitorEventLoopDelay({ resolution: 10 });
  delay.enable();
  const made = await request(ctx.app).post('/api/v1/sweeps').set(ctx.auth).attach('file', file, 'big.s1p').expect(201);
  delay.disable();
  uploadDelayMaxMs = delay.max / 1e6;
  sweepId = made.body.id as string;
  expect(made.body.summary.pointCount).toBe(POINTS);
}, 120_000);

afterAll(async () => {
  await live?.close();
  await ctx?.close();
});

const api = () => request(ctx.app);

async function newKey(dailyQuota: number): Promise<Record<string, string>> {
  const res = await admin.post('/api/v1/keys').send({ name: `reads ${dailyQuota}`, ownerId: ctx.seed.developerId, dailyQuota }).expect(201);
  return { Authorization: `Bearer ${res.body.secret}` };
}

/** The `"daily"` units left, from an answer's RateLimit field. */
function dailyRemaining(res: { headers: Record<string, string> } | Response): number {
  const field = res instanceof Response ? res.headers.get('ratelimit') : res.headers.ratelimit;
  const m = /"daily"; r=(\d+)/.exec(field ?? '');
  if (!m) throw new Error(`no daily RateLimit item in ${JSON.stringify(field)}`);
  return Number(m[1]);
}

/** Reads a streamed answer line by line without keeping it, sampling this process's RSS as it goes. */
async function readLines(res: Response, onLine: (line: string, index: number) => void): Promise<{ lines: number; rssGrowthMb: number }> {
  const before = process.memoryUsage().rss;
  let peak = before;
  let rest = '';
  let lines = 0;
  const decoder = new TextDecoder();
  for await (const chunk of res.body as unknown as AsyncIterable<Uint8Array>) {
    rest += decoder.decode(chunk, { stream: true });
    let end: number;
    while ((end = rest.indexOf('\n')) !== -1) {
      onLine(rest.slice(0, end), lines++);
      rest = rest.slice(end + 1);
    }
    peak = Math.max(peak, process.memoryUsage().rss);
  }
  expect(rest).toBe('');
  return { lines, rssGrowthMb: (peak - before) / 2 ** 20 };
}

describe('a 100,000-point sweep', () => {
  it('is uploaded without holding the event loop for long (read and analysed off the loop)', () => {
    expect(uploadDelayMaxMs).toBeLessThan(200);
  });

  it('answers GET with the summary and the first page, and with fields=summary without points', async () => {
    const one = await api().get(`/api/v1/sweeps/${sweepId}`).set(ctx.auth).expect(200);
    expect(one.body.summary.pointCount).toBe(POINTS);
    expect(one.body.points).toHaveLength(1000);
    expect(one.body.points[0].frequencyHz).toBe(frequencyOf(0));
    expect(typeof one.body.nextCursor).toBe('string');
    const summary = await api().get(`/api/v1/sweeps/${sweepId}?fields=summary`).set(ctx.auth).expect(200);
    expect(summary.body.points).toBeUndefined();
    expect(summary.body.nextCursor).toBeUndefined();
    expect(summary.body.summary).toEqual(one.body.summary);
  });

  it('gives every point exactly once, in order, when the page cursors are followed', async () => {
    const first = await api().get(`/api/v1/sweeps/${sweepId}`).set(ctx.auth).expect(200);
    let count = first.body.points.length as number;
    let cursor = first.body.nextCursor as string | null;
    let expected = count;
    let pages = 1;
    while (cursor !== null) {
      const page = await api().get(`/api/v1/sweeps/${sweepId}/points`).query({ cursor, limit: 2000 }).set(ctx.auth).expect(200);
      expect(page.body.points.length).toBeGreaterThan(0);
      expect(page.body.points.length).toBeLessThanOrEqual(2000);
      for (const p of page.body.points as { frequencyHz: number }[]) expect(p.frequencyHz).toBe(frequencyOf(expected++));
      count += page.body.points.length;
      cursor = page.body.nextCursor;
      pages++;
    }
    expect(count).toBe(POINTS);
    expect(pages).toBe(1 + Math.ceil((POINTS - 1000) / 2000));
  }, 120_000);

  it('gives the same point at the same place in a page, the first page and the export', async () => {
    const page = await api().get(`/api/v1/sweeps/${sweepId}/points`).query({ limit: 3 }).set(ctx.auth).expect(200);
    const next = await api().get(`/api/v1/sweeps/${sweepId}/points`).query({ limit: 3, cursor: page.body.nextCursor }).set(ctx.auth).expect(200);
    const first = await api().get(`/api/v1/sweeps/${sweepId}`).set(ctx.auth).expect(200);
    expect([...page.body.points, ...next.body.points]).toEqual(first.body.points.slice(0, 6));
  });

  it('streams every point as CSV with bounded memory', async () => {
    const res = await fetch(`${live.base}/api/v1/sweeps/${sweepId}/points.csv`, { headers: ctx.auth });
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toMatch(/^text\/csv/);
    let last = '';
    const read = await readLines(res, (line, i) => {
      if (i === 0) expect(line).toBe('frequency_hz,r_ohm,x_ohm,reflection_re,reflection_im,reflection_magnitude,reflection_angle_deg,swr,return_loss_db\r');
      last = line;
    });
    expect(read.lines).toBe(POINTS + 1);
    expect(Number(last.split(',')[0])).toBe(frequencyOf(POINTS - 1));
    expect(read.rssGrowthMb).toBeLessThan(150);
  }, 120_000);

  it('streams every point as NDJSON (Accept or format=ndjson) with bounded memory', async () => {
    for (const [url, headers] of [
      [`${live.base}/api/v1/sweeps/${sweepId}/points`, { ...ctx.auth, Accept: 'application/x-ndjson' }],
      [`${live.base}/api/v1/sweeps/${sweepId}/points?format=ndjson`, ctx.auth],
    ] as const) {
      const res = await fetch(url, { headers });
      expect(res.status).toBe(200);
      expect(res.headers.get('content-type')).toMatch(/^application\/x-ndjson/);
      let previous = -1;
      const read = await readLines(res, (line, i) => {
        const point = JSON.parse(line) as { frequencyHz: number };
        expect(point.frequencyHz).toBe(frequencyOf(i));
        expect(point.frequencyHz).toBeGreaterThan(previous);
        previous = point.frequencyHz;
      });
      expect(read.lines).toBe(POINTS);
      expect(read.rssGrowthMb).toBeLessThan(150);
    }
  }, 120_000);

  it('streams CSV for Accept: text/csv on the points route', async () => {
    const res = await fetch(`${live.base}/api/v1/sweeps/${sweepId}/points?format=csv`, { headers: ctx.auth });
    expect(res.status).toBe(200);
    const read = await readLines(res, () => {});
    expect(read.lines).toBe(POINTS + 1);
  }, 120_000);
});

describe('paging rules', () => {
  it('refuses a cursor it did not give out (400 naming cursor)', async () => {
    const res = await api().get(`/api/v1/sweeps/${sweepId}/points`).query({ cursor: 'not-a-cursor' }).set(ctx.auth).expect(400);
    expect(res.body.errors[0].field).toBe('cursor');
  });

  it('refuses a page larger than 2,000 points, naming limit', async () => {
    const res = await api().get(`/api/v1/sweeps/${sweepId}/points`).query({ limit: 5000 }).set(ctx.auth);
    expect([400, 422]).toContain(res.status);
    expect(res.body.errors[0].field).toBe('limit');
  });

  it('answers an empty last page after the final cursor is passed past the end', async () => {
    const res = await api().get(`/api/v1/sweeps/${sweepId}/points`).query({ cursor: Buffer.from(`p${POINTS}`).toString('base64url') }).set(ctx.auth).expect(200);
    expect(res.body).toEqual({ points: [], nextCursor: null });
  });
});

describe('metered reads', () => {
  it('spends one unit per page and says so in RateLimit', async () => {
    const key = await newKey(1000);
    const a = await api().get(`/api/v1/sweeps/${sweepId}`).set(key).expect(200);
    const b = await api().get(`/api/v1/sweeps/${sweepId}/points`).query({ cursor: a.body.nextCursor }).set(key).expect(200);
    const c = await api().get('/api/v1/sweeps').set(key).expect(200);
    const d = await api().get('/api/v1/feedlines').set(key).expect(200);
    const e = await api().get('/api/v1/cables').set(key).expect(200);
    const remaining = [a, b, c, d, e].map(dailyRemaining);
    expect(remaining).toEqual([999, 998, 997, 996, 995]);
    for (const r of [a, b, c, d, e]) expect(r.headers['ratelimit-policy']).toContain('"daily"; q=1000');
  });

  it('charges an export one unit per 2,000 points', async () => {
    const key = await newKey(1000);
    const before = dailyRemaining(await api().get(`/api/v1/sweeps/${sweepId}?fields=summary`).set(key).expect(200));
    const res = await fetch(`${live.base}/api/v1/sweeps/${sweepId}/points.csv`, { headers: key });
    expect(res.status).toBe(200);
    expect(dailyRemaining(res)).toBe(before - POINTS / 2000);
    await res.body!.cancel();
  });

  it('refuses reads with 429 and Retry-After once the key has spent its quota', async () => {
    const key = await newKey(2);
    await api().get('/api/v1/sweeps').set(key).expect(200);
    await api().get(`/api/v1/sweeps/${sweepId}?fields=summary`).set(key).expect(200);
    for (const path of ['/api/v1/sweeps', `/api/v1/sweeps/${sweepId}`, `/api/v1/sweeps/${sweepId}/points`, '/api/v1/feedlines', '/api/v1/cables']) {
      const refused = await api().get(path).set(key).expect(429);
      expect(refused.headers['retry-after']).toMatch(/^\d+$/);
      expect(dailyRemaining(refused)).toBe(0);
    }
  });

  it('refuses an export whose units do not fit before sending any of it', async () => {
    const key = await newKey(10);
    const res = await api().get(`/api/v1/sweeps/${sweepId}/points.csv`).set(key).expect(429);
    expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
    expect(res.body.detail).toMatch(/needs 50 units/);
  });
});
