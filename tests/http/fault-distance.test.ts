import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { SPEED_OF_LIGHT_M_PER_S } from '../../shared/rf/constants.ts';
import { findCable, cableLossDbPer100m } from '../../shared/rf/cables.ts';
import { FaultDistanceRequestSchema } from '../../shared/schemas/fault.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// Method: band-pass frequency-domain reflectometry (resolution c·VF/(2·span), range c·VF/(2·step);
// e.g. Agilent application note 1287-12, from memory). The sweeps are invented: a point reflection
// ρ·e^{−j2πf·2d/(c·VF)} per fault, so each fault's distance is known exactly. File forms: Touchstone
// File Format Specification, Version 2.0 (IBIS Open Forum, 2009), § Option Line and § Network Data (headings from memory).

let ctx: TestApp;

beforeAll(async () => {
  ctx = await createTestApp();
});
afterAll(async () => {
  await ctx.close();
});

const api = () => request(ctx.app);

const VF = 0.66;

/** An invented feeder: a wet connector (|Γ| 0.12) at 17 m and the antenna (|Γ| 0.4) at 42 m, 401 points from 2 to 802 MHz. */
function feederSweep(n = 401, startHz = 2e6, stepHz = 2e6, vf = VF, lossDbPer100m = 0): { frequencyHz: number; re: number; im: number }[] {
  return Array.from({ length: n }, (_, k) => {
    const f = startHz + k * stepHz;
    let re = 0;
    let im = 0;
    for (const [rho, d] of [[0.12, 17], [0.4, 42]] as const) {
      const a = rho * 10 ** ((-2 * d * lossDbPer100m) / 100 / 20);
      const phase = (-4 * Math.PI * f * d) / (SPEED_OF_LIGHT_M_PER_S * vf);
      re += a * Math.cos(phase);
      im += a * Math.sin(phase);
    }
    return { frequencyHz: f, re, im };
  });
}

type Peak = { distanceM: number; reflectionMagnitude: number; returnLossDb: number | null };

function expectFaults(body: { peaks: Peak[]; resolutionM: number }, expected: { distanceM: number; magnitude: number }[], magnitudeTolerance = 0.01): void {
  const top = body.peaks.slice(0, expected.length).sort((a, b) => a.distanceM - b.distanceM);
  expected.forEach((e, i) => {
    expect(Math.abs(top[i]!.distanceM - e.distanceM), `peak near ${e.distanceM} m`).toBeLessThan(body.resolutionM / 10);
    expect(Math.abs(top[i]!.reflectionMagnitude - e.magnitude), `magnitude near ${e.distanceM} m`).toBeLessThan(magnitudeTolerance);
  });
}

const FAULTS = [
  { distanceM: 17, magnitude: 0.12 },
  { distanceM: 42, magnitude: 0.4 },
];

describe('POST /api/v1/fault-distance', () => {
  it('answers the documented example with its two faults where the scenario put them', async () => {
    const example = FaultDistanceRequestSchema.meta()!.example as object;
    const res = await api().post('/api/v1/fault-distance').set(ctx.auth).send(example).expect(200);
    // The documented scenario: a wet connector at 8 m and the antenna at 19 m.
    expect(res.body.peaks.slice(0, 2).map((p: Peak) => Math.round(p.distanceM))).toEqual([19, 8]);
    expect(res.body.rangeM).toBe(24);
    expect(res.body.compensatedLossDbPer100m).toBe(4.5);
  });

  it('places reflection points within a tenth of the resolution, with the resolution and range of the sweep', async () => {
    const points = feederSweep().map((p) => ({ frequencyHz: p.frequencyHz, reflection: { re: p.re, im: p.im } }));
    const res = await api().post('/api/v1/fault-distance').set(ctx.auth).send({ points, line: { velocityFactor: VF } }).expect(200);
    const speed = SPEED_OF_LIGHT_M_PER_S * VF;
    expect(res.body.resolutionM).toBeCloseTo(speed / (2 * 800e6), 12);
    expect(res.body.maxDistanceM).toBeCloseTo(speed / (2 * 2e6), 9);
    expect(res.body.window).toBe('hann');
    expect(res.body.compensatedLossDbPer100m).toBeNull();
    expectFaults(res.body, FAULTS);
    expect(res.body.points.length).toBeLessThanOrEqual(4096);
    expect(res.body.points[0].distanceM).toBe(0);
  });

  it('reads points given as impedances against referenceOhm the same as reflections', async () => {
    // Z = R·(1 + Γ)/(1 − Γ), common practice.
    const asLoads = feederSweep().map((p) => {
      const d = (1 - p.re) ** 2 + p.im ** 2;
      return { frequencyHz: p.frequencyHz, loadOhm: { re: (75 * (1 - p.re * p.re - p.im * p.im)) / d, im: (75 * 2 * p.im) / d } };
    });
    const res = await api().post('/api/v1/fault-distance').set(ctx.auth).send({ points: asLoads, referenceOhm: 75, line: { velocityFactor: VF } }).expect(200);
    expectFaults(res.body, FAULTS, 1e-6);
  });

  it('takes a catalog cable\'s velocity factor and removes its loss at the centre of the sweep out and back', async () => {
    const cable = findCable('rg-213')!;
    const centreLoss = cableLossDbPer100m(cable, 402e6);
    const points = feederSweep(401, 2e6, 2e6, cable.velocityFactor, centreLoss).map((p) => ({ frequencyHz: p.frequencyHz, reflection: { re: p.re, im: p.im } }));
    const res = await api().post('/api/v1/fault-distance').set(ctx.auth).send({ points, line: { cableId: 'rg-213' }, window: 'blackman' }).expect(200);
    expect(res.body.velocityFactor).toBe(0.66);
    expect(res.body.compensatedLossDbPer100m).toBeCloseTo(centreLoss, 12);
    expectFaults(res.body, FAULTS);
    const raw = await api().post('/api/v1/fault-distance').set(ctx.auth).send({ points, line: { cableId: 'rg-213' }, compensateLoss: false }).expect(200);
    expect(raw.body.compensatedLossDbPer100m).toBeNull();
    expectFaults(raw.body, [
      { distanceM: 17, magnitude: 0.12 * 10 ** ((-2 * 17 * centreLoss) / 100 / 20) },
      { distanceM: 42, magnitude: 0.4 * 10 ** ((-2 * 42 * centreLoss) / 100 / 20) },
    ]);
  });

  it('runs as the batch op fault-distance with the same answer', async () => {
    const example = FaultDistanceRequestSchema.meta()!.example as object;
    const single = await api().post('/api/v1/fault-distance').set(ctx.auth).send(example).expect(200);
    const batch = await api().post('/api/v1/batch').set(ctx.auth).send({ items: [{ op: 'fault-distance', input: example }] }).expect(200);
    expect(batch.body.results[0]).toEqual({ ok: true, output: single.body });
  });

  describe('refuses what it cannot compute with a 422 saying why', () => {
    const points = feederSweep(64).map((p) => ({ frequencyHz: p.frequencyHz, reflection: { re: p.re, im: p.im } }));

    it('unevenly spaced frequencies, naming the point and how far off it is', async () => {
      const uneven = points.map((p, k) => (k === 10 ? { ...p, frequencyHz: p.frequencyHz + 0.5e6 } : p));
      const res = await api().post('/api/v1/fault-distance').set(ctx.auth).send({ points: uneven, line: { velocityFactor: VF } }).expect(422);
      expect(res.body.errors[0].field).toBe('points.10.frequencyHz');
      expect(res.body.errors[0].message).toMatch(/evenly spaced.*25\.0 % of a step/);
    });

    it('too few points', async () => {
      const res = await api().post('/api/v1/fault-distance').set(ctx.auth).send({ points: points.slice(0, 8), line: { velocityFactor: VF } }).expect(422);
      expect(res.body.errors[0].message).toMatch(/at least 16/);
    });

    it('a resolution coarser than the asked range', async () => {
      const res = await api().post('/api/v1/fault-distance').set(ctx.auth).send({ points, line: { velocityFactor: VF }, maxDistanceM: 0.5 }).expect(422);
      expect(res.body.errors[0]).toMatchObject({ field: 'maxDistanceM', message: expect.stringMatching(/resolves 0\.78\d+ m .* coarser than the 0\.5 m asked/) });
    });

    it('a cable whose loss is not known at the centre of the sweep', async () => {
      // The 450 Ω window line's table ends at 300 MHz; this sweep's centre is 463 MHz.
      const high = feederSweep(64, 400e6, 2e6).map((p) => ({ frequencyHz: p.frequencyHz, reflection: { re: p.re, im: p.im } }));
      const res = await api().post('/api/v1/fault-distance').set(ctx.auth).send({ points: high, line: { cableId: 'window-line-450' } }).expect(422);
      expect(res.body.errors[0].field).toBe('line.cableId');
    });
  });

  describe('refuses a request that does not fit the schema with a 400', () => {
    const points = feederSweep(20).map((p) => ({ frequencyHz: p.frequencyHz, reflection: { re: p.re, im: p.im } }));
    it.each([
      ['a cable and a velocity factor at once', { cableId: 'rg-213', velocityFactor: 0.66 }, undefined, 'line.velocityFactor'],
      ['a cable with a loss of its own', { cableId: 'rg-213', lossDbPer100m: 3 }, undefined, 'line.lossDbPer100m'],
      ['no line at all', {}, undefined, 'line'],
      ['loss compensation without a loss', { velocityFactor: 0.66 }, true, 'compensateLoss'],
    ])('%s', async (_name, line, compensateLoss, field) => {
      const res = await api().post('/api/v1/fault-distance').set(ctx.auth).send({ points, line, compensateLoss }).expect(400);
      expect(res.body.errors.map((e: { field: string }) => e.field)).toContain(field);
    });

    it('an unknown window', async () => {
      const res = await api().post('/api/v1/fault-distance').set(ctx.auth).send({ points, line: { velocityFactor: VF }, window: 'triangle' }).expect(400);
      expect(res.body.errors[0].field).toBe('window');
    });
  });
});

describe('POST /api/v1/sweeps/{id}/fault-distance', () => {
  const sweep = feederSweep();
  const upload = (text: string, fileName: string) => api().post('/api/v1/sweeps').set(ctx.auth).attach('file', Buffer.from(text), fileName).expect(201);

  it.each([
    [
      'Touchstone version 1 (MHz, RI)',
      'feeder-v1.s1p',
      () => ['! invented feeder sweep', '# MHz S RI R 50', ...sweep.map((p) => `${p.frequencyHz / 1e6} ${p.re} ${p.im}`)].join('\n'),
    ],
    [
      'Touchstone version 2 (Hz, MA)',
      'feeder-v2.s1p',
      () =>
        [
          '[Version] 2.0',
          '# Hz S MA R 50',
          '[Number of Ports] 1',
          `[Number of Frequencies] ${sweep.length}`,
          '[Network Data]',
          ...sweep.map((p) => `${p.frequencyHz} ${Math.hypot(p.re, p.im)} ${(Math.atan2(p.im, p.re) * 180) / Math.PI}`),
          '[End]',
        ].join('\n'),
    ],
    ['CSV (s11 columns)', 'feeder.csv', () => ['frequency_hz,s11_re,s11_im', ...sweep.map((p) => `${p.frequencyHz},${p.re},${p.im}`)].join('\n')],
  ])('finds the faults of a sweep uploaded as %s', async (_name, fileName, text) => {
    const stored = await upload(text(), fileName);
    const res = await api().post(`/api/v1/sweeps/${stored.body.id}/fault-distance`).set(ctx.auth).send({ line: { velocityFactor: VF } }).expect(200);
    expectFaults(res.body, FAULTS, 1e-6);
  });

  it('finds the faults of a sweep stored from JSON points, with an account cable', async () => {
    const admin = await ctx.adminAgent();
    await admin.post('/api/v1/cables').send({ id: 'account-fault-reel', designation: 'Fault test reel', impedanceOhm: 50, velocityFactor: VF, attenuation: { kind: 'k1k2', k1: 0, k2: 0 }, source: 'invented for a test' }).expect(201);
    const stored = await api()
      .post('/api/v1/sweeps')
      .set(ctx.auth)
      .send({ name: 'Feeder', points: sweep.map((p) => ({ frequencyHz: p.frequencyHz, reflection: { re: p.re, im: p.im } })) })
      .expect(201);
    const res = await api().post(`/api/v1/sweeps/${stored.body.id}/fault-distance`).set(ctx.auth).send({ line: { cableId: 'account-fault-reel' } }).expect(200);
    expectFaults(res.body, FAULTS, 1e-6);
    expect(res.body.compensatedLossDbPer100m).toBeNull();
  });

  it('addresses a problem with the stored points to the sweep', async () => {
    const stored = await api().post('/api/v1/sweeps').set(ctx.auth).send({ points: [{ frequencyHz: 7e6, loadOhm: 50 }, { frequencyHz: 7.1e6, loadOhm: 52 }] }).expect(201);
    const res = await api().post(`/api/v1/sweeps/${stored.body.id}/fault-distance`).set(ctx.auth).send({ line: { velocityFactor: VF } }).expect(422);
    expect(res.body.errors[0]).toMatchObject({ field: 'id', message: expect.stringMatching(/^in the stored sweep: .*at least 16/) });
  });

  it('answers 404 for a sweep that is not there', async () => {
    await api().post('/api/v1/sweeps/00000000-0000-4000-8000-000000000000/fault-distance').set(ctx.auth).send({ line: { velocityFactor: VF } }).expect(404);
  });
});
