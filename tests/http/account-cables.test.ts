import { randomUUID } from 'node:crypto';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CABLE_CATALOG } from '../../shared/rf/cables.ts';
import { ACCOUNT_CABLE_PREFIX } from '../../shared/schemas/cables.ts';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { organisations, users } from '../../server/db/schema.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// Attenuation model k1·√f + k2·f (f in MHz) as documented for the catalog; expected losses are hand
// calculations from the coefficients. An account cable must behave exactly like the same figures
// given as { impedanceOhm, velocityFactor, lossDbPer100m }.

let ctx: TestApp;
let admin: Awaited<ReturnType<TestApp['adminAgent']>>;
let otherOrg: Record<string, string>;

const RIDGE_REEL = {
  id: 'account-ridge-reel',
  designation: 'Ridge reel, low-loss 50 ohm',
  impedanceOhm: 50,
  velocityFactor: 0.85,
  attenuation: { kind: 'k1k2', k1: 0.62, k2: 0.0031 },
  maxVoltageRmsV: 2500,
  source: 'Club measurement with a return-loss bridge (invented)',
};

/** k1·√f + k2·f at 14.2 MHz: 0.62·√14.2 + 0.0031·14.2 dB/100 m (hand calculation). */
const LOSS_AT_14_2_MHZ = 0.62 * Math.sqrt(14.2) + 0.0031 * 14.2;

beforeAll(async () => {
  ctx = await createTestApp();
  admin = await ctx.adminAgent();
  await admin.post('/api/v1/cables').send(RIDGE_REEL).expect(201);
  const db = ctx.database.db;
  const [org] = await db.insert(organisations).values({ name: 'Harrow Fen Contest Group', slug: `harrow-${randomUUID().slice(0, 8)}` }).returning({ id: organisations.id });
  const [user] = await db.insert(users).values({ organisationId: org!.id, email: `ivo.kant.${randomUUID().slice(0, 8)}@harrow.example`, displayName: 'Ivo Kant', role: 'admin' }).returning({ id: users.id });
  const key = await createKey(db, { organisationId: org!.id, ownerId: user!.id, name: 'harrow', note: '', dailyQuota: 1000, burstPerMinute: 1000, actor: { userId: user!.id, label: 'ivo' } }, new Date());
  otherOrg = { Authorization: `Bearer ${key.secret}` };
});
afterAll(async () => {
  await ctx.close();
});

const api = () => request(ctx.app);
const asSpec = (lossDbPer100m: number, lengthM: number) => ({ impedanceOhm: 50, velocityFactor: 0.85, lossDbPer100m, lengthM });

describe('defining cables', () => {
  it('lists the catalog, then the organisation\'s cables, each marked with its origin', async () => {
    const res = await api().get('/api/v1/cables').set(ctx.auth).expect(200);
    const cables = res.body.cables as { id: string; origin: string }[];
    expect(cables.slice(0, CABLE_CATALOG.length).every((c) => c.origin === 'catalog')).toBe(true);
    expect(cables.find((c) => c.id === RIDGE_REEL.id)).toMatchObject({ ...RIDGE_REEL, origin: 'account' });
  });

  it('keeps account ids apart from catalog ids: no catalog id has the account prefix', () => {
    for (const c of CABLE_CATALOG) expect(c.id.startsWith(ACCOUNT_CABLE_PREFIX)).toBe(false);
  });

  it('makes an id from the designation when none is given, and refuses a taken id (409)', async () => {
    const made = await admin.post('/api/v1/cables').send({ ...RIDGE_REEL, id: undefined, designation: 'Mast Jumper 75 Ω' }).expect(201);
    expect(made.body.id).toBe('account-mast-jumper-75');
    const taken = await admin.post('/api/v1/cables').send(RIDGE_REEL).expect(409);
    expect(taken.body.errors[0].field).toBe('id');
  });

  it('refuses ids outside the account namespace and bad figures (400/422)', async () => {
    const res = await admin.post('/api/v1/cables').send({ ...RIDGE_REEL, id: 'rg-213' }).expect(400);
    expect(res.body.errors[0].field).toBe('id');
    const vf = await admin.post('/api/v1/cables').send({ ...RIDGE_REEL, id: 'account-bad', velocityFactor: 1.4 }).expect(422);
    expect(vf.body.errors[0].field).toBe('velocityFactor');
    const table = await admin
      .post('/api/v1/cables')
      .send({ ...RIDGE_REEL, id: 'account-bad', attenuation: { kind: 'table', points: [{ frequencyHz: 2e6, lossDbPer100m: 1 }, { frequencyHz: 1e6, lossDbPer100m: 2 }] } })
      .expect(422);
    expect(table.body.errors[0].field).toBe('attenuation.points.1.frequencyHz');
  });

  it('is for admins in the console only (403 for developers and keys)', async () => {
    const developer = await ctx.developerAgent();
    await developer.post('/api/v1/cables').send({ ...RIDGE_REEL, id: 'account-dev' }).expect(403);
    await api().post('/api/v1/cables').set(ctx.auth).send({ ...RIDGE_REEL, id: 'account-key' }).expect(403);
    await api().patch('/api/v1/cables/account-ridge-reel').set(ctx.auth).send({ velocityFactor: 0.8 }).expect(403);
  });

  it('records adding, changing and removing a cable in the audit trail, with who did it', async () => {
    const id = 'account-audit-reel';
    await admin.post('/api/v1/cables').send({ ...RIDGE_REEL, id }).expect(201);
    await admin.patch(`/api/v1/cables/${id}`).send({ velocityFactor: 0.8 }).expect(200);
    await admin.delete(`/api/v1/cables/${id}`).expect(204);
    const trail = (await admin.get('/api/v1/audit').expect(200)).body.events as { action: string; targetType: string; actorLabel: string; details: Record<string, unknown> }[];
    const mine = trail.filter((e) => e.targetType === 'cable' && e.details.cableId === id);
    expect(mine.map((e) => e.action).sort()).toEqual(['cable.added', 'cable.changed', 'cable.removed']);
    expect(mine.find((e) => e.action === 'cable.changed')!.details.changed).toEqual(['velocityFactor']);
    for (const e of mine) expect(e.actorLabel).toBe(ctx.seed.adminEmail);
  });

  it('cannot change or remove a catalog cable', async () => {
    await admin.patch('/api/v1/cables/rg-213').send({ velocityFactor: 0.8 }).expect(400);
    await admin.delete('/api/v1/cables/rg-213').expect(400);
  });
});

describe('account cables work everywhere a catalog cable does', () => {
  it('answers GET /cables/{id} and its attenuation (hand calculation)', async () => {
    await api().get(`/api/v1/cables/${RIDGE_REEL.id}`).set(ctx.auth).expect(200);
    const res = await api().get(`/api/v1/cables/${RIDGE_REEL.id}/attenuation?frequencyHz=14200000&lengthM=40`).set(ctx.auth).expect(200);
    expect(res.body.lossDbPer100m).toBeCloseTo(LOSS_AT_14_2_MHZ, 12);
    expect(res.body.lossDb).toBeCloseTo(LOSS_AT_14_2_MHZ * 0.4, 12);
  });

  it('transforms a load on POST /line exactly as the same figures given by hand', async () => {
    const load = { re: 72, im: 18 };
    const byId = await api().post('/api/v1/line').set(ctx.auth).send({ frequencyHz: 14_200_000, line: { cableId: RIDGE_REEL.id, lengthM: 40 }, loadOhm: load }).expect(200);
    const byHand = await api().post('/api/v1/line').set(ctx.auth).send({ frequencyHz: 14_200_000, line: asSpec(LOSS_AT_14_2_MHZ, 40), loadOhm: load }).expect(200);
    expect(byId.body.inputOhm.re).toBeCloseTo(byHand.body.inputOhm.re, 10);
    expect(byId.body.inputOhm.im).toBeCloseTo(byHand.body.inputOhm.im, 10);
    expect(byId.body.matchedLossDb).toBeCloseTo(LOSS_AT_14_2_MHZ * 0.4, 12);
  });

  it('works in batch items, feed lines and sweeps', async () => {
    const batch = await api()
      .post('/api/v1/batch')
      .set(ctx.auth)
      .send({ items: [{ op: 'refer', input: { frequencyHz: 14_200_000, line: { cableId: RIDGE_REEL.id, lengthM: 40 }, direction: 'inputToLoad', reading: { swr: 1.5 } } }] })
      .expect(200);
    expect(batch.body.results[0].output.matchedLossDb).toBeCloseTo(LOSS_AT_14_2_MHZ * 0.4, 12);

    const feedline = await api().post('/api/v1/feedlines').set(ctx.auth).send({ name: 'Reel run', sections: [{ cableId: RIDGE_REEL.id, lengthM: 40 }] }).expect(201);
    const through = await api().post(`/api/v1/feedlines/${feedline.body.id}/line`).set(ctx.auth).send({ frequencyHz: 14_200_000, loadOhm: 50 }).expect(200);
    expect(through.body.matchedLossDb).toBeCloseTo(LOSS_AT_14_2_MHZ * 0.4, 12);

    const sweep = await api().post('/api/v1/sweeps').set(ctx.auth).send({ points: [{ frequencyHz: 14_200_000, loadOhm: 50 }], line: { cableId: RIDGE_REEL.id, lengthM: 40 }, direction: 'loadToInput' }).expect(201);
    expect(sweep.body.points[0].swr).toBeCloseTo(1, 12);
    await api().delete(`/api/v1/feedlines/${feedline.body.id}`).set(ctx.auth).expect(204);
  });

  it('uses the new figures after a change', async () => {
    await admin.post('/api/v1/cables').send({ ...RIDGE_REEL, id: 'account-changing' }).expect(201);
    const changed = await admin.patch('/api/v1/cables/account-changing').send({ attenuation: { kind: 'k1k2', k1: 1, k2: 0 } }).expect(200);
    expect(changed.body.attenuation).toEqual({ kind: 'k1k2', k1: 1, k2: 0 });
    const res = await api().get('/api/v1/cables/account-changing/attenuation?frequencyHz=16000000').set(ctx.auth).expect(200);
    // 1·√16 = 4 dB/100 m.
    expect(res.body.lossDbPer100m).toBeCloseTo(4, 12);
  });
});

describe('removing cables and other organisations', () => {
  it('refuses to remove a cable a feed line uses (409 naming it), then removes it once unused', async () => {
    await admin.post('/api/v1/cables').send({ ...RIDGE_REEL, id: 'account-going' }).expect(201);
    const feedline = await api().post('/api/v1/feedlines').set(ctx.auth).send({ name: 'Hut jumper', sections: [{ cableId: 'account-going', lengthM: 3 }] }).expect(201);
    const refused = await admin.delete('/api/v1/cables/account-going').expect(409);
    expect(refused.body.detail).toMatch(/"Hut jumper"/);
    await api().delete(`/api/v1/feedlines/${feedline.body.id}`).set(ctx.auth).expect(204);
    await admin.delete('/api/v1/cables/account-going').expect(204);
    await admin.delete('/api/v1/cables/account-going').expect(404);
    const gone = await api().post('/api/v1/line').set(ctx.auth).send({ frequencyHz: 7e6, line: { cableId: 'account-going', lengthM: 3 }, loadOhm: 50 }).expect(422);
    expect(gone.body.errors[0].field).toBe('line.cableId');
  });

  it('keeps a cable to its organisation: others neither see nor use it', async () => {
    const list = await api().get('/api/v1/cables').set(otherOrg).expect(200);
    expect(list.body.cables.some((c: { id: string }) => c.id === RIDGE_REEL.id)).toBe(false);
    await api().get(`/api/v1/cables/${RIDGE_REEL.id}`).set(otherOrg).expect(404);
    await api().post('/api/v1/line').set(otherOrg).send({ frequencyHz: 7e6, line: { cableId: RIDGE_REEL.id, lengthM: 3 }, loadOhm: 50 }).expect(422);
    await api().post('/api/v1/feedlines').set(otherOrg).send({ name: 'borrowed', sections: [{ cableId: RIDGE_REEL.id, lengthM: 3 }] }).expect(422);
  });
});
