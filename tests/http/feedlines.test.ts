import { randomUUID } from 'node:crypto';
import fc from 'fast-check';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { findCable } from '../../shared/rf/cables.ts';
import { attenuatorSection, cascadeLines, lineFromCable } from '../../shared/rf/line.ts';
import { referReading } from '../../shared/rf/refer.ts';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { organisations, users } from '../../server/db/schema.ts';
import { DEMO_FEEDLINE, seedDemo } from '../../server/demo/seed.ts';
import { feedlines as feedlinesTable, sweeps as sweepsTable } from '../../server/db/schema.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// Cascading: each section's load is the input impedance of the section after it, and a connector is
// a matched fixed loss (common practice, as in every transmission-line handbook). The per-section
// reference values come from the single-section endpoint and from shared/rf directly.

let ctx: TestApp;
let otherOrg: Record<string, string>;

beforeAll(async () => {
  ctx = await createTestApp();
  otherOrg = await keyOfAnotherOrganisation(ctx);
});
afterAll(async () => {
  await ctx.close();
});

/** A key of a second, invented organisation, to prove that saved data stays inside its owner. */
async function keyOfAnotherOrganisation(app: TestApp): Promise<Record<string, string>> {
  const db = app.database.db;
  const [org] = await db.insert(organisations).values({ name: 'Lowmoor Repeater Group', slug: `lowmoor-${randomUUID().slice(0, 8)}` }).returning({ id: organisations.id });
  const [user] = await db
    .insert(users)
    .values({ organisationId: org!.id, email: `tam.osei.${randomUUID().slice(0, 8)}@lowmoor.example`, displayName: 'Tam Osei', role: 'admin' })
    .returning({ id: users.id });
  const key = await createKey(
    db,
    { organisationId: org!.id, ownerId: user!.id, name: 'lowmoor', note: '', dailyQuota: 1000, burstPerMinute: 1000, actor: { userId: user!.id, label: 'tam' } },
    new Date(),
  );
  return { Authorization: `Bearer ${key.secret}` };
}

const api = () => request(ctx.app);
const TWO_SECTIONS = [
  { cableId: 'rg-213', lengthM: 20, label: 'Buried run' },
  { cableId: 'rg-58', lengthM: 10, label: 'Up the mast' },
];

async function save(sections: unknown[], name = 'Test run'): Promise<string> {
  const res = await api().post('/api/v1/feedlines').set(ctx.auth).send({ name, sections }).expect(201);
  return res.body.id as string;
}

function expectComplexClose(actual: { re: number; im: number }, expected: { re: number; im: number }, rel = 1e-12): void {
  expect(Math.hypot(actual.re - expected.re, actual.im - expected.im)).toBeLessThanOrEqual(rel * Math.hypot(expected.re, expected.im));
}

describe('saving feed lines', () => {
  it('saves, lists, reads, changes and deletes a feed line of the organisation', async () => {
    const created = await api()
      .post('/api/v1/feedlines')
      .set(ctx.auth)
      .send({ name: 'Shack to tower', notes: 'invented', sections: [...TWO_SECTIONS, { insertionLossDb: 0.2, label: 'Lightning arrestor' }] })
      .expect(201);
    expect(created.body).toMatchObject({ name: 'Shack to tower', notes: 'invented', lengthM: 30 });
    expect(created.body.sections).toHaveLength(3);
    const id = created.body.id as string;

    const list = await api().get('/api/v1/feedlines').set(ctx.auth).expect(200);
    expect(list.body.feedlines.map((f: { id: string }) => f.id)).toContain(id);

    await api().get(`/api/v1/feedlines/${id}`).set(ctx.auth).expect(200);
    const changed = await api().patch(`/api/v1/feedlines/${id}`).set(ctx.auth).send({ name: 'Shack to tower (new arrestor)', sections: [{ cableId: 'rg-213', lengthFt: 100 }] }).expect(200);
    expect(changed.body.name).toBe('Shack to tower (new arrestor)');
    expect(changed.body.lengthM).toBeCloseTo(30.48, 12);

    await api().delete(`/api/v1/feedlines/${id}`).set(ctx.auth).expect(204);
    await api().get(`/api/v1/feedlines/${id}`).set(ctx.auth).expect(404);
  });

  it('shows the demo station\'s feed line to a new organisation member', async () => {
    const list = await api().get('/api/v1/feedlines').set(ctx.auth).expect(200);
    const demo = list.body.feedlines.find((f: { name: string }) => f.name === DEMO_FEEDLINE.name);
    expect(demo.sections).toHaveLength(3);
    expect(demo.sections.filter((s: { insertionLossDb?: number }) => s.insertionLossDb !== undefined)).toHaveLength(1);
  });

  it('seeds the demo station once: a second run adds nothing', async () => {
    const count = async () => [(await ctx.database.db.select().from(feedlinesTable)).length, (await ctx.database.db.select({ id: sweepsTable.id }).from(sweepsTable)).length];
    const before = await count();
    await seedDemo(ctx.database.db, ctx.config.demoAdmin);
    expect(await count()).toEqual(before);
  });
});

describe('bad feed lines are problems that name the field', () => {
  it('wants a label on a connector (400: a required field of the connector form)', async () => {
    const res = await api().post('/api/v1/feedlines').set(ctx.auth).send({ name: 'x', sections: [TWO_SECTIONS[0], { insertionLossDb: 0.1 }] }).expect(400);
    expect(res.body.errors).toContainEqual(expect.objectContaining({ field: 'sections.1.label' }));
  });

  it('refuses a connector that also has a length', async () => {
    const res = await api().post('/api/v1/feedlines').set(ctx.auth).send({ name: 'x', sections: [TWO_SECTIONS[0], { insertionLossDb: 0.1, label: 'N', lengthM: 2 }] });
    expect(res.status).toBeGreaterThanOrEqual(400);
    expect(res.status).toBeLessThan(500);
    expect(res.body.errors).toContainEqual(expect.objectContaining({ field: 'sections.1.lengthM' }));
  });

  it('refuses an unknown cable id (422) and a length given twice (400)', async () => {
    const unknown = await api().post('/api/v1/feedlines').set(ctx.auth).send({ name: 'x', sections: [{ cableId: 'no-such-cable', lengthM: 3 }] }).expect(422);
    expect(unknown.body.errors).toEqual([expect.objectContaining({ field: 'sections.0.cableId' })]);
    const twice = await api().post('/api/v1/feedlines').set(ctx.auth).send({ name: 'x', sections: [{ cableId: 'rg-58', lengthM: 3, lengthFt: 10 }] });
    expect(twice.status).toBe(400);
    expect(twice.body.errors).toContainEqual(expect.objectContaining({ field: 'sections.0.lengthFt' }));
  });

  it('refuses a feed line of connectors only, and an id that is not a UUID', async () => {
    await api().post('/api/v1/feedlines').set(ctx.auth).send({ name: 'x', sections: [{ insertionLossDb: 0.1, label: 'N' }] }).expect(422);
    await api().get('/api/v1/feedlines/not-a-uuid').set(ctx.auth).expect(400);
  });
});

describe('calculations through a saved feed line', () => {
  const frequencyHz = 14_200_000;
  const loadOhm = { re: 72, im: 18 };

  it('gives the same input impedance as the two single-section transformations applied in turn', async () => {
    const id = await save(TWO_SECTIONS);
    const whole = await api().post(`/api/v1/feedlines/${id}/line`).set(ctx.auth).send({ frequencyHz, loadOhm, powerW: 100 }).expect(200);
    const far = await api().post('/api/v1/line').set(ctx.auth).send({ frequencyHz, line: { cableId: 'rg-58', lengthM: 10 }, loadOhm, powerW: 50 }).expect(200);
    const near = await api().post('/api/v1/line').set(ctx.auth).send({ frequencyHz, line: { cableId: 'rg-213', lengthM: 20 }, loadOhm: far.body.inputOhm }).expect(200);
    expectComplexClose(whole.body.inputOhm, near.body.inputOhm);
    expect(whole.body.matchedLossDb).toBeCloseTo(near.body.matchedLossDb + far.body.matchedLossDb, 12);
    expect(whole.body.totalLossDb).toBeCloseTo(near.body.totalLossDb + far.body.totalLossDb, 10);
    expect(whole.body.sections).toHaveLength(2);
    expectComplexClose(whole.body.sections[1].inputOhm, far.body.inputOhm);
    // Power carried through: what reaches the end of the first section feeds the second.
    expect(whole.body.power.inputW).toBeCloseTo(100, 9);
    expect(whole.body.sections[0].power.loadW).toBeCloseTo(whole.body.sections[1].power.inputW, 9);
  });

  it('equals shared/rf cascadeLines on the same sections, connector included', async () => {
    const id = await save([TWO_SECTIONS[0], { insertionLossDb: 0.25, label: 'N barrel' }, TWO_SECTIONS[1]]);
    const res = await api().post(`/api/v1/feedlines/${id}/line`).set(ctx.auth).send({ frequencyHz, loadOhm }).expect(200);
    const near = lineFromCable(findCable('rg-213')!, 20, frequencyHz);
    const far = lineFromCable(findCable('rg-58')!, 10, frequencyHz);
    const expected = cascadeLines([near, attenuatorSection(0.25, far.characteristicOhm), far], loadOhm, frequencyHz);
    expectComplexClose(res.body.inputOhm, expected.inputOhm);
    expect(res.body.matchedLossDb).toBeCloseTo(expected.matchedLossDb, 12);
  });

  it('adds a connector\'s insertion loss to the matched loss (hand calculation)', async () => {
    const lossless = { impedanceOhm: 50, velocityFactor: 1, lossDbPer100m: 0, lengthM: 10 };
    const id = await save([lossless, { insertionLossDb: 0.5, label: 'Pad' }, lossless]);
    const res = await api().post(`/api/v1/feedlines/${id}/line`).set(ctx.auth).send({ frequencyHz: 7_000_000, loadOhm: 50, powerW: 100 }).expect(200);
    // A matched 0.5 dB loss passes 10^(−0.05) of the power: 89.125… W of 100 W.
    expect(res.body.matchedLossDb).toBeCloseTo(0.5, 12);
    expect(res.body.power.loadW).toBeCloseTo(100 * 10 ** -0.05, 9);
    expectComplexClose(res.body.inputOhm, { re: 50, im: 0 });
  });

  it('cautions per section when the computed voltage passes a section\'s rating, connectors included', async () => {
    // 400 W net into SWR 12 on 50 Ω: the standing wave never drops below √(Pf·Z0)·(1 − |Γ|) ≈ 41 V RMS
    // anywhere (hand calculation), so a 20 V rating is passed wherever the connector sits.
    const lossless = { impedanceOhm: 50, velocityFactor: 1, lossDbPer100m: 0, lengthM: 10 };
    const id = await save([lossless, { insertionLossDb: 0.1, label: 'Wall feed-through', maxVoltageRmsV: 20 }, { ...lossless, maxVoltageRmsV: 10_000 }]);
    const res = await api().post(`/api/v1/feedlines/${id}/line`).set(ctx.auth).send({ frequencyHz: 7_000_000, loadOhm: 600, powerW: 400 }).expect(200);
    expect(res.body.cautions).toHaveLength(1);
    expect(res.body.cautions[0]).toMatch(/^Section 2: Caution: the computed RMS voltage on Wall feed-through reaches/);
  });

  it('refers a reading through the sum of the sections\' matched losses, as POST /refer does', async () => {
    const id = await save([TWO_SECTIONS[0], { insertionLossDb: 0.1, label: 'N barrel' }, TWO_SECTIONS[1]]);
    const reading = { forwardPowerW: 100, reflectedPowerW: 5 };
    const res = await api().post(`/api/v1/feedlines/${id}/refer`).set(ctx.auth).send({ frequencyHz, direction: 'inputToLoad', reading }).expect(200);
    const near = lineFromCable(findCable('rg-213')!, 20, frequencyHz);
    const far = lineFromCable(findCable('rg-58')!, 10, frequencyHz);
    const matched = (m: typeof near) => 20 * Math.log10(Math.E) * m.propagationPerM.re * m.lengthM;
    expect(res.body.sectionsMatchedLossDb[0]).toBeCloseTo(matched(near), 12);
    expect(res.body.sectionsMatchedLossDb[1]).toBeCloseTo(0.1, 12);
    expect(res.body.matchedLossDb).toBeCloseTo(matched(near) + 0.1 + matched(far), 12);
    const expected = referReading({ matchedLossDb: res.body.matchedLossDb, direction: 'inputToLoad', reading });
    expect(res.body.atLoad.swr).toBeCloseTo(expected.atLoad.swr!, 12);
    const single = await api().post('/api/v1/refer').set(ctx.auth).send({ matchedLossDb: res.body.matchedLossDb, direction: 'inputToLoad', reading }).expect(200);
    expect(res.body.atLoad).toEqual(single.body.atLoad);
  });

  it('answers readings the line cannot explain with a 422 problem', async () => {
    const id = await save([{ cableId: 'rg-58', lengthM: 60 }]);
    const res = await api().post(`/api/v1/feedlines/${id}/refer`).set(ctx.auth).send({ frequencyHz: 145e6, direction: 'inputToLoad', reading: { swr: 3 } }).expect(422);
    expect(res.body.errors[0].field).toBe('reading.swr');
  });

  it('answers a bad body with a 400 problem and a missing feed line with 404', async () => {
    const id = await save(TWO_SECTIONS);
    const bad = await api().post(`/api/v1/feedlines/${id}/line`).set(ctx.auth).send({ frequencyHz: 'fast', loadOhm: 50 }).expect(400);
    expect(bad.body.errors[0].field).toBe('frequencyHz');
    await api().post(`/api/v1/feedlines/${randomUUID()}/line`).set(ctx.auth).send({ frequencyHz, loadOhm }).expect(404);
  });
});

describe('sections given inline to POST /line, /refer and batch', () => {
  const frequencyHz = 14_200_000;
  const loadOhm = { re: 72, im: 18 };
  const SECTIONS = [TWO_SECTIONS[0], { insertionLossDb: 0.25, label: 'N barrel', maxVoltageRmsV: 20 }, TWO_SECTIONS[1]];

  it('answers POST /line with sections exactly as the same sections saved as a feed line', async () => {
    const id = await save(SECTIONS);
    const saved = await api().post(`/api/v1/feedlines/${id}/line`).set(ctx.auth).send({ frequencyHz, loadOhm, powerW: 100 }).expect(200);
    const inline = await api().post('/api/v1/line').set(ctx.auth).send({ frequencyHz, line: SECTIONS, loadOhm, powerW: 100 }).expect(200);
    expect(inline.body).toEqual(saved.body);
    expect(inline.body.sections).toHaveLength(3);
    expect(inline.body.cautions[0]).toMatch(/^Section 2: /);
  });

  it('refers a reading through inline sections exactly as through the saved feed line', async () => {
    const id = await save(SECTIONS);
    const reading = { swr: 1.8 };
    const saved = await api().post(`/api/v1/feedlines/${id}/refer`).set(ctx.auth).send({ frequencyHz, direction: 'inputToLoad', reading }).expect(200);
    const inline = await api().post('/api/v1/refer').set(ctx.auth).send({ frequencyHz, line: SECTIONS, direction: 'inputToLoad', reading }).expect(200);
    expect(inline.body).toEqual(saved.body);
    expect(inline.body.sectionsMatchedLossDb[1]).toBe(0.25);
  });

  it('runs sections in a batch item, and names a bad section\'s field from the request root', async () => {
    const res = await api()
      .post('/api/v1/batch')
      .set(ctx.auth)
      .send({ items: [{ op: 'line', input: { frequencyHz, line: SECTIONS, loadOhm } }, { op: 'line', input: { frequencyHz, line: [TWO_SECTIONS[0], { cableId: 'no-such-cable', lengthM: 3 }], loadOhm } }] })
      .expect(200);
    expect(res.body.results[0].output.sections).toHaveLength(3);
    expect(res.body.results[1].problem.errors[0].field).toBe('items.1.input.line.1.cableId');
    const single = await api().post('/api/v1/line').set(ctx.auth).send({ frequencyHz, line: [{ insertionLossDb: 0.1 }], loadOhm }).expect(400);
    expect(single.body.errors.map((e: { field: string }) => e.field)).toContain('line.0.label');
    await api().post('/api/v1/line').set(ctx.auth).send({ frequencyHz, line: [], loadOhm }).expect(422);
  });

  it('gives the same figures for one section in an array as for the same LineSpec (property)', async () => {
    await fc.assert(
      fc.asyncProperty(
        fc.double({ min: 1, max: 200, noNaN: true }),
        fc.double({ min: -200, max: 200, noNaN: true }),
        fc.double({ min: 0.5, max: 300, noNaN: true }),
        async (re, im, lengthM) => {
          const line = { impedanceOhm: 50, velocityFactor: 0.8, lossDbPer100m: 3, lengthM };
          const one = await api().post('/api/v1/line').set(ctx.auth).send({ frequencyHz, line, loadOhm: { re, im } }).expect(200);
          const array = await api().post('/api/v1/line').set(ctx.auth).send({ frequencyHz, line: [line], loadOhm: { re, im } }).expect(200);
          const { sections, ...totals } = array.body;
          expect(sections).toEqual([one.body]);
          expect(totals.inputOhm).toEqual(one.body.inputOhm);
          expect(totals.atLoad).toEqual(one.body.atLoad);
          expect(totals.totalLossDb).toBeCloseTo(one.body.totalLossDb, 12);
        },
      ),
      { numRuns: 25 },
    );
  });
});

describe('feed lines belong to one organisation', () => {
  it('hides a feed line from another organisation (404 on read, change, delete and calculations)', async () => {
    const id = await save(TWO_SECTIONS, 'Private run');
    await api().get(`/api/v1/feedlines/${id}`).set(otherOrg).expect(404);
    await api().patch(`/api/v1/feedlines/${id}`).set(otherOrg).send({ name: 'taken' }).expect(404);
    await api().delete(`/api/v1/feedlines/${id}`).set(otherOrg).expect(404);
    await api().post(`/api/v1/feedlines/${id}/line`).set(otherOrg).send({ frequencyHz: 7e6, loadOhm: 50 }).expect(404);
    const list = await api().get('/api/v1/feedlines').set(otherOrg).expect(200);
    expect(list.body.feedlines).toEqual([]);
    await api().get(`/api/v1/feedlines/${id}`).set(ctx.auth).expect(200);
  });
});
