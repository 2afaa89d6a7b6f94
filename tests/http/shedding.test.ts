import http from 'node:http';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp, type GammalineApp } from '../../server/app.ts';
import type { EventLoopDelay } from '../../server/metrics/event-loop-delay.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';
import { listen } from '../helpers/live-server.ts';

// 503 and Retry-After: RFC 9110 §15.6.4 and §10.2.3; the problem body: RFC 9457.
// Deterministic on purpose: the event loop's delay comes from a reading the test sets, and the
// in-flight bound is met by holding one request open, never by timing.

let ctx: TestApp;

beforeAll(async () => {
  ctx = await createTestApp();
});
afterAll(async () => {
  await ctx.close();
});

const mismatch = { forwardPowerW: 100, reflectedPowerW: 4 };

/** An event-loop delay reading the test sets by hand. */
function fakeDelay(): EventLoopDelay & { set(ms: number): void } {
  let ms = 0;
  return { currentMs: () => ms, recentMs: () => ms, stop: () => {}, set: (value) => (ms = value) };
}

async function counter(app: GammalineApp, name: string, labels: string): Promise<number> {
  const text = (await request(app).get('/metrics').expect(200)).text;
  const series = labels === '' ? `${name} ` : `${name}{${labels}} `;
  const line = text.split('\n').find((l) => l.startsWith(series));
  return line ? Number(line.slice(line.lastIndexOf(' ') + 1)) : 0;
}

async function unitsSpent(app: GammalineApp): Promise<number> {
  return counter(app, 'gammaline_calculation_units_spent_total', 'endpoint="mismatch"');
}

describe('shedding on the event loop\'s delay', () => {
  let app: GammalineApp;
  const delay = fakeDelay();

  beforeAll(() => {
    app = createApp({ database: ctx.database, config: { ...ctx.config, shed: { eventLoopDelayMs: 50, maxInFlight: 0 } }, eventLoopDelay: delay });
  });
  afterAll(async () => {
    await app.close();
  });

  it('admits API requests while the delay is within the bound', async () => {
    delay.set(49);
    await request(app).post('/api/v1/mismatch').set(ctx.auth).send(mismatch).expect(200);
  });

  it('answers 503 problem with Retry-After at once, before the caller, the body or any unit', async () => {
    delay.set(51);
    const spentBefore = await unitsSpent(app);
    const shedBefore = await counter(app, 'gammaline_http_requests_shed_total', 'reason="event_loop_delay"');

    const res = await request(app).post('/api/v1/mismatch').set(ctx.auth).send(mismatch).expect(503);
    expect(res.headers['retry-after']).toBe('1');
    expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
    expect(res.body).toMatchObject({ type: 'urn:gammaline:problem:unavailable', status: 503, instance: '/api/v1/mismatch' });
    expect(res.body.detail).toMatch(/overloaded/);
    // Not a 401 without a key, not a 400 for a body that is not JSON: neither was looked at.
    await request(app).post('/api/v1/mismatch').send(mismatch).expect(503);
    await request(app).post('/api/v1/mismatch').set(ctx.auth).set('Content-Type', 'application/json').send('{not json').expect(503);

    expect(await unitsSpent(app)).toBe(spentBefore);
    expect(await counter(app, 'gammaline_http_requests_shed_total', 'reason="event_loop_delay"')).toBe(shedBefore + 3);
  });

  it('never sheds health checks, /metrics or the console', async () => {
    delay.set(500);
    await request(app).get('/healthz').expect(200);
    await request(app).get('/readyz').expect(200);
    await request(app).get('/metrics').expect(200);
    // Outside /api/v1: answered as without shedding (no console build here, so a 404 problem).
    const res = await request(app).get('/keys').set('Accept', 'text/html');
    expect(res.status).not.toBe(503);
  });

  it('admits again as soon as the delay is back within the bound', async () => {
    delay.set(0);
    await request(app).post('/api/v1/mismatch').set(ctx.auth).send(mismatch).expect(200);
  });
});

describe('shedding on requests in flight', () => {
  it('sheds new requests while the bound is reached and lets the admitted one finish', async () => {
    const app = createApp({ database: ctx.database, config: { ...ctx.config, shed: { eventLoopDelayMs: 0, maxInFlight: 1 } }, eventLoopDelay: fakeDelay() });
    const server = await listen(app);
    try {
      const body = JSON.stringify(mismatch);
      // Admitted, then held open: its body arrives in two parts, the second only when the test says.
      const url = new URL('/api/v1/mismatch', server.base);
      const held = http.request(url, { method: 'POST', headers: { ...ctx.auth, 'Content-Type': 'application/json', 'Content-Length': String(Buffer.byteLength(body)) } });
      const answer = new Promise<{ status: number; text: string }>((resolve, reject) => {
        held.on('response', (res) => {
          let text = '';
          res.setEncoding('utf8');
          res.on('data', (c: string) => (text += c));
          res.on('end', () => resolve({ status: res.statusCode ?? 0, text }));
        });
        held.on('error', reject);
      });
      held.write(body.slice(0, 5));
      // The held request is admitted once the server has read its headers: wait until it counts.
      for (let i = 0; i < 100 && (await counter(app, 'gammaline_http_requests_in_flight', '')) < 1; i++) {
        await new Promise((resolve) => setTimeout(resolve, 10));
      }
      const inFlight = (await request(app).get('/metrics').expect(200)).text.match(/^gammaline_http_requests_in_flight (\d+)$/m);
      expect(inFlight?.[1]).toBe('1');

      const shed = await fetch(new URL('/api/v1/mismatch', server.base), { method: 'POST', headers: { ...ctx.auth, 'Content-Type': 'application/json' }, body });
      expect(shed.status).toBe(503);
      expect(shed.headers.get('retry-after')).toBe('1');
      expect(((await shed.json()) as { detail: string }).detail).toMatch(/bound of 1 requests under way/);
      expect((await fetch(new URL('/healthz', server.base))).status).toBe(200);

      held.end(body.slice(5));
      const done = await answer;
      expect(done.status).toBe(200);
      expect(done.text).toMatch(/swr/i);

      // Answered, so the bound is free again.
      const after = await fetch(new URL('/api/v1/mismatch', server.base), { method: 'POST', headers: { ...ctx.auth, 'Content-Type': 'application/json' }, body });
      expect(after.status).toBe(200);
      expect(await counter(app, 'gammaline_http_requests_shed_total', 'reason="in_flight"')).toBe(1);
    } finally {
      await server.close();
      await app.close();
    }
  });
});
