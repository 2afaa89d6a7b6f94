import { sql } from 'drizzle-orm';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestApp, manualClock, type TestApp } from '../helpers/app.ts';

// The console draws daily usage per key and per endpoint from one GET /api/v1/usage; these tests pin
// the shape of those series against rows written straight into usage_daily (hand-made fixtures).

let ctx: TestApp;
const clock = manualClock('2026-03-14T12:00:00Z');

beforeAll(async () => {
  ctx = await createTestApp({}, { clock });
  const { organisationId, developerId, developerKeyId } = ctx.seed;
  await ctx.database.db.execute(sql`
    insert into usage_daily (organisation_id, user_id, key_id, endpoint, day, units, requests) values
      (${organisationId}::uuid, ${developerId}::uuid, ${developerKeyId}::uuid, 'line', '2026-03-12', 5, 5),
      (${organisationId}::uuid, ${developerId}::uuid, ${developerKeyId}::uuid, 'mismatch', '2026-03-14', 7, 7),
      (${organisationId}::uuid, ${developerId}::uuid, null, 'line', '2026-03-14', 2, 2)`);
});
afterAll(async () => {
  await ctx.close();
});

describe('GET /api/v1/usage daily series', () => {
  it('gives units per day for each endpoint, aligned with days and zero where nothing was spent', async () => {
    const res = await request(ctx.app).get('/api/v1/usage?from=2026-03-12&to=2026-03-14').set(ctx.auth).expect(200);
    expect(res.body.days.map((d: { day: string }) => d.day)).toEqual(['2026-03-12', '2026-03-13', '2026-03-14']);
    expect(res.body.dailyByEndpoint).toEqual([
      { endpoint: 'line', units: [5, 0, 2] },
      { endpoint: 'mismatch', units: [0, 0, 7] },
    ]);
  });

  it('gives units per day for each key, and the console calls as a series of their own', async () => {
    const res = await request(ctx.app).get('/api/v1/usage?from=2026-03-12&to=2026-03-14').set(ctx.auth).expect(200);
    const byKey = new Map(res.body.dailyByKey.map((s: { keyId: string | null; units: number[] }) => [s.keyId, s.units]));
    expect(byKey.get(ctx.seed.developerKeyId)).toEqual([5, 0, 7]);
    expect(byKey.get(null)).toEqual([0, 0, 2]);
    const summed = [0, 1, 2].map((i) => res.body.dailyByKey.reduce((s: number, k: { units: number[] }) => s + k.units[i]!, 0));
    expect(summed).toEqual(res.body.days.map((d: { units: number }) => d.units));
  });
});
