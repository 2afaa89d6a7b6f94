import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../server/app.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// Exposition format: Prometheus' text format 0.0.4 (prometheus.io/docs/instrumenting/exposition_formats);
// histograms as <name>_bucket/_sum/_count series.

let ctx: TestApp;
let admin: Awaited<ReturnType<TestApp['adminAgent']>>;

beforeAll(async () => {
  ctx = await createTestApp();
  admin = await ctx.adminAgent();
});
afterAll(async () => {
  await ctx.close();
});

/** Every sample of an exposition by its series (`name{labels}` as written), value as a number. */
function samples(text: string): Map<string, number> {
  const out = new Map<string, number>();
  for (const line of text.split('\n')) {
    if (line === '' || line.startsWith('#')) continue;
    const at = line.lastIndexOf(' ');
    out.set(line.slice(0, at), Number(line.slice(at + 1)));
  }
  return out;
}

async function scrape(): Promise<Map<string, number>> {
  const res = await request(ctx.app).get('/metrics').expect(200);
  return samples(res.text);
}

/** The sum of every sample of `name` whose labels include all of `labels`. */
function total(all: Map<string, number>, name: string, labels: Record<string, string> = {}): number {
  let sum = 0;
  for (const [series, value] of all) {
    const brace = series.indexOf('{');
    if ((brace === -1 ? series : series.slice(0, brace)) !== name) continue;
    if (Object.entries(labels).every(([k, v]) => series.includes(`${k}="${v}"`))) sum += value;
  }
  return sum;
}

const mismatch = { forwardPowerW: 100, reflectedPowerW: 4 };

async function newKey(limits: { dailyQuota?: number; burstPerMinute?: number }) {
  const res = await admin.post('/api/v1/keys').send({ name: 'metrics probe', ownerId: ctx.seed.developerId, ...limits }).expect(201);
  return { Authorization: `Bearer ${res.body.secret as string}` };
}

describe('GET /metrics answers the Prometheus text format', () => {
  it('serves the process metrics and the app\'s own from loopback', async () => {
    const res = await request(ctx.app).get('/metrics').expect(200);
    expect(res.headers['content-type']).toMatch(/^text\/plain; version=0\.0\.4/);
    expect(res.text).toContain('# TYPE process_cpu_user_seconds_total counter');
    expect(res.text).toContain('# TYPE nodejs_eventloop_lag_p99_seconds gauge');
    for (const name of [
      'gammaline_http_request_duration_seconds',
      'gammaline_http_requests_shed_total',
      'gammaline_calculation_units_spent_total',
      'gammaline_calculation_units_refused_total',
      'gammaline_quota_lease_reservations_total',
      'gammaline_quota_lease_give_backs_total',
      'gammaline_quota_reclaim_requests_total',
      'gammaline_key_cache_lookups_total',
      'gammaline_db_pool_connections',
      'gammaline_db_pool_idle_connections',
      'gammaline_db_pool_waiting_queries',
      'gammaline_ndjson_lines_streamed_total',
      'gammaline_sweeps_stored_total',
    ]) {
      expect(res.text).toContain(`# TYPE ${name} `);
    }
    expect(total(samples(res.text), 'gammaline_db_pool_max_connections')).toBe(10);
  });
});

describe('counters move by exactly the traffic sent', () => {
  it('counts requests by route template, method and status, and the units they spent', async () => {
    const before = await scrape();
    for (let i = 0; i < 3; i++) await request(ctx.app).post('/api/v1/mismatch').set(ctx.auth).send(mismatch).expect(200);
    await request(ctx.app).post('/api/v1/mismatch').set(ctx.auth).send({ forwardPowerW: 'lots' }).expect(400);
    await request(ctx.app).get('/api/v1/no-such-thing').set(ctx.auth).expect(404);
    const after = await scrape();
    const moved = (name: string, labels: Record<string, string>) => total(after, name, labels) - total(before, name, labels);

    expect(moved('gammaline_http_request_duration_seconds_count', { route: '/api/v1/mismatch', method: 'POST', status: '200' })).toBe(3);
    // A body that fails validation is still counted under its route's template.
    expect(moved('gammaline_http_request_duration_seconds_count', { route: '/api/v1/mismatch', method: 'POST', status: '400' })).toBe(1);
    expect(moved('gammaline_http_request_duration_seconds_count', { route: 'unmatched', method: 'GET', status: '404' })).toBe(1);
    // Every calculation spends its unit when admitted, before its body is validated (server/quota/meter.ts).
    expect(moved('gammaline_calculation_units_spent_total', { endpoint: 'mismatch' })).toBe(4);
    // One cache lookup per key presented (the 404 path has no key check).
    expect(moved('gammaline_key_cache_lookups_total', {})).toBe(4);
    // The key's first calls were verified after the suite's seeding; later ones come from the cache.
    expect(moved('gammaline_key_cache_lookups_total', { result: 'hit' })).toBeGreaterThanOrEqual(3);
    // The scrape between them is itself a request: exactly one GET /metrics is counted so far.
    expect(moved('gammaline_http_request_duration_seconds_count', { route: '/metrics', method: 'GET', status: '200' })).toBe(1);
  });

  it('counts units refused by the daily quota and by the per-minute limit', async () => {
    const small = await newKey({ dailyQuota: 2, burstPerMinute: 100 });
    const slow = await newKey({ dailyQuota: 100, burstPerMinute: 1 });
    const before = await scrape();
    await request(ctx.app).post('/api/v1/mismatch').set(small).send(mismatch).expect(200);
    await request(ctx.app).post('/api/v1/mismatch').set(small).send(mismatch).expect(200);
    await request(ctx.app).post('/api/v1/mismatch').set(small).send(mismatch).expect(429);
    await request(ctx.app).post('/api/v1/mismatch').set(slow).send(mismatch).expect(200);
    await request(ctx.app).post('/api/v1/mismatch').set(slow).send(mismatch).expect(429);
    const after = await scrape();
    const moved = (name: string, labels: Record<string, string>) => total(after, name, labels) - total(before, name, labels);

    expect(moved('gammaline_calculation_units_spent_total', { endpoint: 'mismatch' })).toBe(3);
    expect(moved('gammaline_calculation_units_refused_total', { endpoint: 'mismatch', reason: 'quota' })).toBe(1);
    expect(moved('gammaline_calculation_units_refused_total', { endpoint: 'mismatch', reason: 'burst' })).toBe(1);
    expect(moved('gammaline_http_request_duration_seconds_count', { route: '/api/v1/mismatch', status: '429' })).toBe(2);
    expect(moved('gammaline_quota_lease_reservations_total', {})).toBeGreaterThanOrEqual(2);
  });

  it('counts the give-backs of unspent units', async () => {
    await request(ctx.app).post('/api/v1/mismatch').set(ctx.auth).send(mismatch).expect(200);
    const before = await scrape();
    await ctx.settle();
    const after = await scrape();
    expect(total(after, 'gammaline_quota_lease_give_backs_total') - total(before, 'gammaline_quota_lease_give_backs_total')).toBeGreaterThanOrEqual(1);
  });

  it('never puts key ids, secrets, e-mail addresses or concrete ids into a label', async () => {
    const res = await request(ctx.app).get('/metrics').expect(200);
    expect(res.text).not.toContain(ctx.seed.developerKeyId);
    expect(res.text).not.toContain(ctx.seed.developerKey);
    expect(res.text).not.toContain(ctx.seed.organisationId);
    expect(res.text).not.toMatch(/@[a-z-]+\.example/);
    expect(res.text).not.toContain('no-such-thing');
  });
});

describe('who may read /metrics', () => {
  it('answers 404 to a request forwarded by a proxy, even one on this machine', async () => {
    const res = await request(ctx.app).get('/metrics').set('X-Forwarded-For', '203.0.113.7').expect(404);
    expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
    expect(res.text).not.toContain('gammaline_');
  });

  it('opens to a bearer of METRICS_TOKEN when one is set, and only to the right token', async () => {
    const token = 'metrics-token-for-the-test-suite';
    const withToken = createApp({ database: ctx.database, config: { ...ctx.config, metricsToken: token } });
    try {
      await request(withToken).get('/metrics').set('X-Forwarded-For', '203.0.113.7').expect(404);
      await request(withToken).get('/metrics').set('X-Forwarded-For', '203.0.113.7').set('Authorization', 'Bearer not-the-token').expect(404);
      const res = await request(withToken).get('/metrics').set('X-Forwarded-For', '203.0.113.7').set('Authorization', `Bearer ${token}`).expect(200);
      expect(res.text).toContain('# TYPE gammaline_http_request_duration_seconds histogram');
    } finally {
      await withToken.close();
    }
  });

  it('keeps each app\'s counters in its own registry', async () => {
    const other = createApp({ database: ctx.database, config: ctx.config });
    try {
      const res = await request(other).get('/metrics').expect(200);
      // The new app has answered nothing before this scrape.
      expect(total(samples(res.text), 'gammaline_http_request_duration_seconds_count')).toBe(0);
      expect(total(samples(res.text), 'gammaline_calculation_units_spent_total')).toBe(0);
    } finally {
      await other.close();
    }
  });
});
