import { randomUUID } from 'node:crypto';
import { readFileSync } from 'node:fs';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { organisations, users } from '../../server/db/schema.ts';
import { DEMO_FEEDLINE } from '../../server/demo/seed.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';
import { dipoleImpedance, dipoleTouchstone, DIPOLE_FREQUENCIES_HZ, type Format, type Parameter, type Unit } from '../unit/sweep/dipole.ts';

// File rules: Touchstone File Format Specification, Version 2.0 (IBIS Open Forum, 2009), § Option
// Line and § Network Data (headings from memory). Expected impedances: the invented series RLC dipole of tests/unit/sweep/dipole.ts,
// computed independently with complex.js. SWR and return loss from |Γ| are common practice.

let ctx: TestApp;
let otherOrg: Record<string, string>;

beforeAll(async () => {
  ctx = await createTestApp();
  const db = ctx.database.db;
  const [org] = await db.insert(organisations).values({ name: 'Fenwick Marsh Net', slug: `fenwick-${randomUUID().slice(0, 8)}` }).returning({ id: organisations.id });
  const [user] = await db.insert(users).values({ organisationId: org!.id, email: `ada.brin.${randomUUID().slice(0, 8)}@fenwick.example`, displayName: 'Ada Brin', role: 'admin' }).returning({ id: users.id });
  const key = await createKey(db, { organisationId: org!.id, ownerId: user!.id, name: 'fenwick', note: '', dailyQuota: 1000, burstPerMinute: 1000, actor: { userId: user!.id, label: 'ada' } }, new Date());
  otherOrg = { Authorization: `Bearer ${key.secret}` };
});
afterAll(async () => {
  await ctx.close();
});

const api = () => request(ctx.app);
const upload = (text: string | Buffer, fileName: string, fields: Record<string, string> = {}) => {
  let req = api().post('/api/v1/sweeps').set(ctx.auth);
  for (const [k, v] of Object.entries(fields)) req = req.field(k, v);
  return req.attach('file', Buffer.isBuffer(text) ? text : Buffer.from(text), fileName);
};

type Point = { frequencyHz: number; loadOhm: { re: number; im: number } | null; swr: number | null };

function expectImpedance(actual: { re: number; im: number } | null, expected: { re: number; im: number }, rel = 1e-9): void {
  expect(actual).not.toBeNull();
  expect(Math.hypot(actual!.re - expected.re, actual!.im - expected.im)).toBeLessThanOrEqual(rel * Math.hypot(expected.re, expected.im));
}

function expectDipolePoints(points: Point[]): void {
  expect(points).toHaveLength(DIPOLE_FREQUENCIES_HZ.length);
  points.forEach((p, i) => {
    const f = DIPOLE_FREQUENCIES_HZ[i]!;
    expect(Math.abs(p.frequencyHz - f)).toBeLessThanOrEqual(1e-9 * f);
    expectImpedance(p.loadOhm, dipoleImpedance(f));
  });
}

describe('Touchstone uploads', () => {
  const forms: { unit: Unit; parameter: Parameter; format: Format; referenceOhm: number; version: 1 | 2 }[] = [
    { unit: 'MHz', parameter: 'S', format: 'RI', referenceOhm: 50, version: 1 },
    { unit: 'Hz', parameter: 'S', format: 'MA', referenceOhm: 50, version: 1 },
    { unit: 'GHz', parameter: 'S', format: 'DB', referenceOhm: 50, version: 1 },
    { unit: 'kHz', parameter: 'Z', format: 'RI', referenceOhm: 50, version: 1 },
    { unit: 'MHz', parameter: 'Y', format: 'MA', referenceOhm: 75, version: 1 },
    { unit: 'MHz', parameter: 'Z', format: 'RI', referenceOhm: 50, version: 2 },
    { unit: 'kHz', parameter: 'Y', format: 'DB', referenceOhm: 25, version: 2 },
    { unit: 'GHz', parameter: 'S', format: 'MA', referenceOhm: 75, version: 2 },
  ];

  for (const form of forms) {
    it(`reads "# ${form.unit} ${form.parameter} ${form.format} R ${form.referenceOhm}" (version ${form.version}) to the same points`, async () => {
      const res = await upload(dipoleTouchstone(form), 'larkspur-dipole.s1p', { referenceOhm: '50' }).expect(201);
      expect(res.body).toMatchObject({ sourceFormat: 'touchstone', fileName: 'larkspur-dipole.s1p', name: 'larkspur-dipole', referenceOhm: 50 });
      expectDipolePoints(res.body.points);
    });
  }

  it('reads option fields in any order and in any case, with comments, and defaults the reference to the file\'s R', async () => {
    const res = await upload(dipoleTouchstone({ unit: 'MHz', parameter: 'S', format: 'RI', referenceOhm: 75, version: 1, optionLine: '# r 75 ri s mhz ! analyzer export' }), 'a.s1p').expect(201);
    expect(res.body.referenceOhm).toBe(75);
    expectDipolePoints(res.body.points);
  });

  it('reads the version 1 and version 2 fixture files', async () => {
    const fixture = (name: string) => readFileSync(new URL(`../fixtures/sweeps/${name}`, import.meta.url));
    const v1 = await upload(fixture('millbrook-vertical-v1.s1p'), 'millbrook-vertical-v1.s1p').expect(201);
    expect(v1.body.points).toHaveLength(4);
    // |S11| = 0.2 at 0°: SWR = 1.2/0.8 = 1.5 (hand calculation).
    expect(v1.body.points[2].swr).toBeCloseTo(1.5, 12);
    const v2 = await upload(fixture('millbrook-vertical-v2.s1p'), 'millbrook-vertical-v2.s1p').expect(201);
    expectImpedance(v2.body.points[0].loadOhm, { re: 50, im: 25 });
  });
});

describe('CSV and JSON uploads', () => {
  it('reads a CSV of impedances and a CSV of reflection coefficients', async () => {
    const z = await upload('frequency_hz,r_ohm,x_ohm\n7000000,75,0\n7100000,50,0\n', 'points.csv').expect(201);
    expect(z.body.sourceFormat).toBe('csv');
    // 75 ohm on 50 ohm: Γ = 0.2, SWR 1.5 (hand calculation).
    expect(z.body.points[0].swr).toBeCloseTo(1.5, 12);
    const s = await upload('frequency_hz;s11_re;s11_im\n7000000;0.2;0\n', 'gamma.csv').expect(201);
    expectImpedance(s.body.points[0].loadOhm, { re: 75, im: 0 });
  });

  it('takes JSON points with impedances, reflections and an open circuit', async () => {
    const res = await api()
      .post('/api/v1/sweeps')
      .set(ctx.auth)
      .send({ name: 'JSON points', points: [{ frequencyHz: 7e6, loadOhm: 75 }, { frequencyHz: 7.1e6, reflection: { re: 0.2, im: 0 } }, { frequencyHz: 7.2e6, loadOhm: null }] })
      .expect(201);
    expect(res.body.points.map((p: Point) => p.swr)).toEqual([expect.closeTo(1.5, 12), expect.closeTo(1.5, 12), null]);
    expect(res.body.sourceFormat).toBe('json');
  });

  it('keeps a sweep with loads near the largest double exportable (no NaN stored)', async () => {
    const made = await api()
      .post('/api/v1/sweeps')
      .set(ctx.auth)
      .send({ name: 'huge loads', points: [{ frequencyHz: 7e6, loadOhm: { re: 1e308, im: 1e308 } }, { frequencyHz: 7.1e6, loadOhm: 50 }] })
      .expect(201);
    expect(made.body.points[0].reflection.magnitude).toBeCloseTo(1, 12);
    const again = await api().get(`/api/v1/sweeps/${made.body.id}`).set(ctx.auth).expect(200);
    expect(again.body.points[0].reflection.re).toBeCloseTo(1, 12);
    const csv = await api().get(`/api/v1/sweeps/${made.body.id}/points.csv`).set(ctx.auth).expect(200);
    expect(csv.text.split('\r\n')[1]).toMatch(/^7000000,1e\+308,1e\+308,/);
  });

  it('gives a verdict against a mask: pass inside it, fail with the worst point outside it', async () => {
    const text = dipoleTouchstone({ unit: 'MHz', parameter: 'Z', format: 'RI', referenceOhm: 50, version: 2 });
    const pass = await upload(text, 'd.s1p', { mask: JSON.stringify({ maxSwr: 3, startHz: 7.05e6, stopHz: 7.2e6 }) }).expect(201);
    expect(pass.body.verdict.pass).toBe(true);
    const fail = await upload(text, 'd.s1p', { mask: '{"minReturnLossDb": 20}' }).expect(201);
    expect(fail.body.verdict.pass).toBe(false);
    expect(fail.body.verdict.worst.frequencyHz).toBe(6.9e6);
    expect(fail.body.summary.resonancesHz[0]).toBeCloseTo(7.125e6, -3);
  });

  it('judges a stored sweep again by a new mask or threshold, from the same points', async () => {
    // SWR of a resistive load on 50 Ω is ZL/Z0 or Z0/ZL (textbook): 100 Ω → 2, 50 Ω → 1, 75 Ω → 1.5.
    const points = [
      { frequencyHz: 7.0e6, loadOhm: 100 },
      { frequencyHz: 7.1e6, loadOhm: 50 },
      { frequencyHz: 7.2e6, loadOhm: 75 },
    ];
    const stored = await api().post('/api/v1/sweeps').set(ctx.auth).send({ name: 'rejudged', points, mask: { maxSwr: 1.6 } }).expect(201);
    expect(stored.body.verdict).toMatchObject({ pass: false, worst: { frequencyHz: 7.0e6 } });
    const path = `/api/v1/sweeps/${stored.body.id}`;
    const narrowed = await api().patch(path).set(ctx.auth).send({ mask: { maxSwr: 1.6, startHz: 7.05e6, stopHz: 7.2e6 } }).expect(200);
    expect(narrowed.body.verdict).toMatchObject({ pass: true, mask: { maxSwr: 1.6, startHz: 7.05e6, stopHz: 7.2e6 } });
    expect(narrowed.body.points.map((p: { swr: number }) => p.swr)).toEqual(stored.body.points.map((p: { swr: number }) => p.swr));
    const reread = await api().get(path).set(ctx.auth).expect(200);
    expect(reread.body.verdict).toEqual(narrowed.body.verdict);
    const threshold = await api().patch(path).set(ctx.auth).send({ thresholdSwr: 3, mask: null }).expect(200);
    expect(threshold.body.verdict).toBeNull();
    expect(threshold.body.thresholdSwr).toBe(3);
    expect(threshold.body.summary.bands).toEqual([expect.objectContaining({ startHz: 7.0e6, stopHz: 7.2e6 })]);
    await api().patch(path).set(ctx.auth).send({}).expect(400);
    await api().patch(path).set(ctx.auth).send({ mask: { maxSwr: 0.5 } }).expect(422);
    await api().patch(`/api/v1/sweeps/${randomUUID()}`).set(ctx.auth).send({ thresholdSwr: 2 }).expect(404);
  });
});

describe('moving a sweep through a line', () => {
  const line = { cableId: 'rg-213', lengthM: 28 };
  const points = DIPOLE_FREQUENCIES_HZ.map((f) => ({ frequencyHz: f, loadOhm: { re: dipoleImpedance(f).re, im: dipoleImpedance(f).im } }));

  it('returns the original points after moving down the line and back up (exact inverse)', async () => {
    const down = await api().post('/api/v1/sweeps').set(ctx.auth).send({ points, line, direction: 'loadToInput' }).expect(201);
    expect(down.body.direction).toBe('loadToInput');
    const atSource = down.body.points.map((p: Point) => ({ frequencyHz: p.frequencyHz, loadOhm: p.loadOhm }));
    // A lossy line makes the antenna look better from the transmitter end (common practice).
    expect(Math.max(...down.body.points.map((p: Point) => p.swr!))).toBeLessThan(Math.max(...points.map((p) => (Math.hypot(p.loadOhm.re - 50, p.loadOhm.im) + Math.hypot(p.loadOhm.re + 50, p.loadOhm.im)) / (Math.hypot(p.loadOhm.re + 50, p.loadOhm.im) - Math.hypot(p.loadOhm.re - 50, p.loadOhm.im)))));
    const up = await api().post('/api/v1/sweeps').set(ctx.auth).send({ points: atSource, line: [line], direction: 'inputToLoad' }).expect(201);
    up.body.points.forEach((p: Point, i: number) => expectImpedance(p.loadOhm, points[i]!.loadOhm, 1e-9));
  });

  it('moves a file through a saved feed line given as multipart fields, and keeps a copy of its sections', async () => {
    const list = await api().get('/api/v1/feedlines').set(ctx.auth).expect(200);
    const feedline = list.body.feedlines.find((f: { name: string }) => f.name === DEMO_FEEDLINE.name);
    const text = dipoleTouchstone({ unit: 'MHz', parameter: 'S', format: 'RI', referenceOhm: 50, version: 1 });
    const res = await upload(text, 'hut.s1p', { feedlineId: feedline.id, direction: 'inputToLoad', thresholdSwr: '2.5', name: 'From the hut' }).expect(201);
    expect(res.body).toMatchObject({ name: 'From the hut', thresholdSwr: 2.5, feedline: { id: feedline.id, name: DEMO_FEEDLINE.name }, line: DEMO_FEEDLINE.sections });
    const got = await api().get(`/api/v1/sweeps/${res.body.id}`).set(ctx.auth).expect(200);
    expect(got.body.points).toEqual(res.body.points);
  });

  it('refuses a measurement the line cannot explain (422 naming the line) and a line without direction (400)', async () => {
    // A 10 dB line cannot leave |Γ| = 0.5 at its input of any passive antenna.
    const lossy = { impedanceOhm: 50, velocityFactor: 0.66, lossDbPer100m: 50, lengthM: 10 };
    const active = await api().post('/api/v1/sweeps').set(ctx.auth).send({ points: [{ frequencyHz: 7e6, loadOhm: 150 }], line: lossy, direction: 'inputToLoad' }).expect(422);
    expect(active.body.errors[0].field).toBe('line');
    const noDirection = await api().post('/api/v1/sweeps').set(ctx.auth).send({ points: [{ frequencyHz: 7e6, loadOhm: 50 }], line: lossy }).expect(400);
    expect(noDirection.body.errors[0].field).toBe('direction');
  });

  it('names the field inside a bad line, in both of its forms', async () => {
    const single = await api().post('/api/v1/sweeps').set(ctx.auth).send({ points: [{ frequencyHz: 7e6, loadOhm: 50 }], line: { cableId: 'rg-213', lengthM: 'long' }, direction: 'inputToLoad' }).expect(400);
    expect(single.body.errors[0].field).toBe('line.lengthM');
    const unknown = await api().post('/api/v1/sweeps').set(ctx.auth).send({ points: [{ frequencyHz: 7e6, loadOhm: 50 }], line: { cableId: 'rg-999', lengthM: 3 }, direction: 'inputToLoad' }).expect(422);
    expect(unknown.body.errors[0].field).toBe('line.cableId');
    const missingFeedline = await upload('frequency_hz,r_ohm,x_ohm\n7000000,50,0\n', 'a.csv', { feedlineId: randomUUID(), direction: 'inputToLoad' }).expect(422);
    expect(missingFeedline.body.errors[0].field).toBe('feedlineId');
  });
});

describe('malformed uploads are problems a person can act on, never a 500', () => {
  it('names the line and the reason in a bad Touchstone file', async () => {
    const res = await upload('! test\n# MHz S RI R 50\n7.0 0.1 0.2\n7.1 0.1 zero\n', 'bad.s1p').expect(400);
    expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    expect(res.body.errors).toEqual([{ field: 'file', message: expect.stringMatching(/^line 4: /) }]);
    expect(res.body.detail).toMatch(/line 4/);
  });

  it('names the line of a frequency that goes backwards in a CSV', async () => {
    const res = await upload('frequency_hz,r_ohm,x_ohm\n7100000,50,0\n7000000,50,0\n', 'back.csv').expect(400);
    expect(res.body.errors[0].message).toMatch(/^line 3: /);
  });

  it('refuses an empty file, a binary file and a CSV without its header', async () => {
    for (const [body, name] of [
      ['', 'empty.s1p'],
      [Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0x00, 0x00]), 'picture.s1p'],
      ['7000000,50,0\n', 'noheader.csv'],
    ] as const) {
      const res = await upload(body as string | Buffer, name).expect(400);
      expect(res.body.errors[0]).toMatchObject({ field: 'file', message: expect.stringMatching(/^line \d+: /) });
    }
  });

  it('answers 413 for a file over the size limit', async () => {
    const res = await upload(Buffer.alloc(8 * 1024 * 1024 + 1, 0x20), 'huge.s1p').expect(413);
    expect(res.body.errors[0].field).toBe('file');
  });

  it('answers 400 for a file in the wrong field, no file, bad JSON in a field and unknown fields', async () => {
    const wrongField = await api().post('/api/v1/sweeps').set(ctx.auth).attach('sweep', Buffer.from('x'), 'a.s1p').expect(400);
    expect(wrongField.body.detail).toMatch(/"file"/);
    await api().post('/api/v1/sweeps').set(ctx.auth).field('name', 'nothing').expect(400);
    const badJson = await upload('frequency_hz,r_ohm,x_ohm\n7000000,50,0\n', 'a.csv', { line: '{cableId: rg-213}', direction: 'inputToLoad' }).expect(400);
    expect(badJson.body.errors[0].field).toBe('line');
    const badNumber = await upload('frequency_hz,r_ohm,x_ohm\n7000000,50,0\n', 'a.csv', { referenceOhm: 'fifty' }).expect(400);
    expect(badNumber.body.errors[0].field).toBe('referenceOhm');
    const unknown = await upload('frequency_hz,r_ohm,x_ohm\n7000000,50,0\n', 'a.csv', { colour: 'red' }).expect(400);
    expect(unknown.body.errors[0]).toEqual({ field: 'colour', message: 'unknown field' });
  });

  it('answers 415 for a body that is neither a form nor JSON', async () => {
    await api().post('/api/v1/sweeps').set(ctx.auth).set('Content-Type', 'text/plain').send('7000000 50 0').expect(415);
  });

  it('refuses JSON points out of order with the index of the point (422)', async () => {
    const res = await api().post('/api/v1/sweeps').set(ctx.auth).send({ points: [{ frequencyHz: 7.1e6, loadOhm: 50 }, { frequencyHz: 7e6, loadOhm: 50 }] }).expect(422);
    expect(res.body.errors[0].field).toBe('points.1.frequencyHz');
  });
});

describe('stored sweeps', () => {
  it('lists sweeps without points, newest first, including the demo station\'s two', async () => {
    const made = await upload('frequency_hz,r_ohm,x_ohm\n7000000,60,5\n7100000,52,0\n', 'listed.csv').expect(201);
    const res = await api().get('/api/v1/sweeps').set(ctx.auth).expect(200);
    expect(res.body.sweeps[0].id).toBe(made.body.id);
    expect(res.body.sweeps[0].points).toBeUndefined();
    expect(res.body.sweeps[0].summary.pointCount).toBe(2);
    const demo = res.body.sweeps.filter((s: { name: string }) => s.name.startsWith('Ridge dipole'));
    expect(demo.map((s: { verdict: { pass: boolean } }) => s.verdict.pass).sort()).toEqual([false, true]);
  });

  it('exports the analysed points as CSV that reads back to the same sweep', async () => {
    const made = await upload(dipoleTouchstone({ unit: 'MHz', parameter: 'S', format: 'RI', referenceOhm: 50, version: 1 }), 'x.s1p', { name: '=HYPERLINK("x")' }).expect(201);
    const csv = await api().get(`/api/v1/sweeps/${made.body.id}/points.csv`).set(ctx.auth).expect(200);
    expect(csv.headers['content-type']).toMatch(/^text\/csv/);
    expect(csv.headers['content-disposition']).toMatch(/^attachment; filename="?HYPERLINK-x\.csv"?$/);
    expect(csv.text.split('\r\n')[0]).toBe('frequency_hz,r_ohm,x_ohm,reflection_re,reflection_im,reflection_magnitude,reflection_angle_deg,swr,return_loss_db');
    const again = await upload(csv.text, 'again.csv').expect(201);
    again.body.points.forEach((p: Point, i: number) => expect(p).toEqual(made.body.points[i]));
  });

  it('deletes a sweep', async () => {
    const made = await upload('frequency_hz,r_ohm,x_ohm\n7000000,60,5\n', 'gone.csv').expect(201);
    await api().delete(`/api/v1/sweeps/${made.body.id}`).set(ctx.auth).expect(204);
    await api().get(`/api/v1/sweeps/${made.body.id}`).set(ctx.auth).expect(404);
    await api().delete(`/api/v1/sweeps/${made.body.id}`).set(ctx.auth).expect(404);
  });

  it('keeps each organisation\'s sweeps to itself (404 to another organisation)', async () => {
    const made = await upload('frequency_hz,r_ohm,x_ohm\n7000000,60,5\n', 'private.csv').expect(201);
    await api().get(`/api/v1/sweeps/${made.body.id}`).set(otherOrg).expect(404);
    await api().get(`/api/v1/sweeps/${made.body.id}/points.csv`).set(otherOrg).expect(404);
    await api().delete(`/api/v1/sweeps/${made.body.id}`).set(otherOrg).expect(404);
    expect((await api().get('/api/v1/sweeps').set(otherOrg).expect(200)).body.sweeps).toEqual([]);
    // Nor can a sweep of another organisation be moved through this organisation's feed line.
    const feedlines = await api().get('/api/v1/feedlines').set(ctx.auth).expect(200);
    await request(ctx.app)
      .post('/api/v1/sweeps')
      .set(otherOrg)
      .send({ points: [{ frequencyHz: 7e6, loadOhm: 50 }], feedlineId: feedlines.body.feedlines[0].id, direction: 'inputToLoad' })
      .expect(422);
  });
});
