import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestApp } from '../helpers/app.ts';

// These tests check the HTTP wiring of the calculation endpoints: validation (400 for malformed,
// 422 for impossible), null for unbounded results, and that the numbers are the domain library's.
// The numbers themselves are checked against outside references in tests/unit/rf.

let ctx: Awaited<ReturnType<typeof createTestApp>>;
const headers = (): Record<string, string> => ctx.auth;

beforeAll(async () => {
  ctx = await createTestApp();
});
afterAll(async () => {
  await ctx.close();
});

function post(path: string, body: unknown) {
  return request(ctx.app).post(`/api/v1${path}`).set(headers()).send(body as object);
}

describe('POST /api/v1/mismatch', () => {
  it('converts forward/reflected power into every figure, with the net power', async () => {
    // Common practice: 100 W forward, 4 W reflected → |Γ| = √0.04 = 0.2, SWR = 1.2/0.8 = 1.5.
    const res = await post('/mismatch', { forwardPowerW: 100, reflectedPowerW: 4 }).expect(200);
    expect(res.body.reflectionMagnitude).toBeCloseTo(0.2, 15);
    expect(res.body.swr).toBeCloseTo(1.5, 14);
    expect(res.body.netPowerW).toBe(96);
    expect(res.body.transmittedPowerRatio).toBeCloseTo(0.96, 15);
  });

  it('answers null for the SWR of a total reflection and the return loss of a perfect match', async () => {
    const total = await post('/mismatch', { reflectionMagnitude: 1 }).expect(200);
    expect(total.body.swr).toBeNull();
    expect(total.body.mismatchLossDb).toBeNull();
    const perfect = await post('/mismatch', { swr: 1 }).expect(200);
    expect(perfect.body.returnLossDb).toBeNull();
    expect(perfect.body.mismatchLossDb).toBe(0);
  });

  describe('refuses impossible input with a 422 naming the field', () => {
    it.each([
      [{ swr: 0.9 }, 'swr'],
      [{ forwardPowerW: 10, reflectedPowerW: 20 }, 'reflectedPowerW'],
      [{ forwardPowerW: -1, reflectedPowerW: 0 }, 'forwardPowerW'],
    ])('%j → %s', async (body, field) => {
      const res = await post('/mismatch', body).expect(422);
      expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
      expect(res.body.errors.map((e: { field: string }) => e.field)).toContain(field);
    });
  });

  describe('refuses inputs that do not go together with a 400 naming the field (they do not fit the schema)', () => {
    it.each([
      [{ swr: 2, returnLossDb: 10 }, 'returnLossDb'],
      [{ forwardPowerW: 10 }, 'reflectedPowerW'],
      [{}, ''],
    ])('%j → %s', async (body, field) => {
      const res = await post('/mismatch', body).expect(400);
      expect(res.body.errors.map((e: { field: string }) => e.field)).toContain(field);
    });
  });

  describe('refuses malformed input with a 400', () => {
    it.each([[{ swr: '1.5' }], [{ swr: 1.5, colour: 'red' }], [[1, 2]], [{ swr: null }]])('%j', async (body) => {
      const res = await post('/mismatch', body).expect(400);
      expect(res.body.type).toBe('urn:gammaline:problem:validation');
      expect(res.body.errors.length).toBeGreaterThan(0);
    });

    it('wants JSON', async () => {
      const res = await request(ctx.app).post('/api/v1/mismatch').set(headers()).set('Content-Type', 'text/plain').send('swr=2');
      expect(res.status).toBe(415);
      expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    });
  });
});

describe('POST /api/v1/reflection', () => {
  it('says what is wrong with an impedance in either of its forms, not just "Invalid input"', async () => {
    const half = await post('/reflection', { loadOhm: { re: 50 } }).expect(400);
    expect(half.body.errors).toEqual([{ field: 'loadOhm.im', message: 'required (number)' }]);
    const text = await post('/reflection', { loadOhm: '50+j10' }).expect(400);
    expect(text.body.errors).toEqual([{ field: 'loadOhm', message: 'give the impedance in ohms as a number (resistive) or as { "re": R, "im": X }' }]);
    const item = await post('/batch', { items: [{ op: 'reflection', input: { loadOhm: { re: 50 } } }] }).expect(200);
    expect(item.body.results[0].problem.errors).toEqual([{ field: 'items.0.input.loadOhm.im', message: 'required (number)' }]);
  });

  it('computes Γ for a complex load on 50 Ω and inverts it back', async () => {
    // Γ = (100 + j50 − 50)/(100 + j50 + 50) = (50 + j50)/(150 + j50) = 0.4 + j0.2 (hand calculation).
    const res = await post('/reflection', { loadOhm: { re: 100, im: 50 } }).expect(200);
    expect(res.body.reflection.re).toBeCloseTo(0.4, 14);
    expect(res.body.reflection.im).toBeCloseTo(0.2, 14);
    const back = await post('/reflection', { reflection: { re: 0.4, im: 0.2 }, referenceOhm: 50 }).expect(200);
    expect(back.body.loadOhm.re).toBeCloseTo(100, 11);
    expect(back.body.loadOhm.im).toBeCloseTo(50, 11);
  });

  it('accepts a plain number for a resistive load and refuses both forms at once', async () => {
    const res = await post('/reflection', { loadOhm: 25 }).expect(200);
    expect(res.body.reflection.re).toBeCloseTo(-1 / 3, 15);
    await post('/reflection', { loadOhm: 25, reflection: { re: 0, im: 0 } }).expect(400);
  });

  it('refuses a negative load resistance with a 422', async () => {
    const res = await post('/reflection', { loadOhm: { re: -5, im: 0 } }).expect(422);
    expect(res.body.errors[0].field).toBe('loadOhm');
  });
});

describe('POST /api/v1/line', () => {
  it('returns the load unchanged through a zero-length line', async () => {
    const res = await post('/line', { frequencyHz: 14e6, line: { impedanceOhm: 50, velocityFactor: 0.66, lossDbPer100m: 2, lengthM: 0 }, loadOhm: { re: 30, im: 20 } }).expect(200);
    expect(res.body.inputOhm.re).toBeCloseTo(30, 12);
    expect(res.body.inputOhm.im).toBeCloseTo(20, 12);
  });

  it('inverts the load through a lossless quarter-wave line: Zin = Z0²/ZL', async () => {
    // Textbook quarter-wave transformer identity (e.g. Pozar, Microwave Engineering, §2.5).
    const f = 10e6;
    const quarterM = 299_792_458 / f / 4;
    const res = await post('/line', { frequencyHz: f, line: { impedanceOhm: 50, velocityFactor: 1, lossDbPer100m: 0, lengthM: quarterM }, loadOhm: 100 }).expect(200);
    expect(res.body.inputOhm.re).toBeCloseTo(25, 9);
    expect(res.body.inputOhm.im).toBeCloseTo(0, 9);
    expect(res.body.electricalLengthDeg).toBeCloseTo(90, 9);
  });

  it('accepts feet, a catalog cable and power, and reports powers and peaks', async () => {
    const res = await post('/line', { frequencyHz: 14.2e6, line: { cableId: 'rg-213', lengthFt: 100 }, loadOhm: { re: 72, im: 18 }, powerW: 100 }).expect(200);
    expect(res.body.power.inputW).toBeCloseTo(100, 9);
    expect(res.body.power.loadW + res.body.power.lineDissipationW).toBeCloseTo(100, 9);
    expect(res.body.peaks.maxVoltageV).toBeGreaterThan(0);
    expect(Array.isArray(res.body.cautions)).toBe(true);
  });

  it('checks the computed voltage against a rating given with any line form, and the lower of a given and a catalog rating', async () => {
    // 1,500 W into a 2,000 Ω load at the end of a 50 Ω line: a high-SWR case well above usual connector ratings.
    const spec = { impedanceOhm: 50, velocityFactor: 0.66, lossDbPer100m: 2.5, lengthM: 30 };
    const free = await post('/line', { frequencyHz: 7.1e6, line: spec, loadOhm: 2000, powerW: 1500 }).expect(200);
    const peak = free.body.peaks.maxVoltageV as number;
    // No rating given: above 500 V RMS the answer says that none is known instead of saying nothing.
    expect(free.body.cautions).toHaveLength(1);
    expect(free.body.cautions[0]).toMatch(/no voltage rating is known/);
    const rated = await post('/line', { frequencyHz: 7.1e6, line: { ...spec, maxVoltageRmsV: Math.floor(peak) }, loadOhm: 2000, powerW: 1500 }).expect(200);
    expect(rated.body.peaks.maxVoltageV).toBe(peak);
    expect(rated.body.cautions).toHaveLength(1);
    expect(rated.body.cautions[0]).toContain(`rating of ${Math.floor(peak)} V RMS`);
    expect(rated.body.cautions[0]).toMatch(/local electrical codes and licensed practice/);
    const above = await post('/line', { frequencyHz: 7.1e6, line: { ...spec, maxVoltageRmsV: Math.ceil(peak) }, loadOhm: 2000, powerW: 1500 }).expect(200);
    expect(above.body.cautions).toEqual([]);
    const rlgc = { rlgc: { rOhmPerM: 0.05, lHPerM: 2.5e-7, gSPerM: 0, cFPerM: 1e-10 }, lengthM: 30, maxVoltageRmsV: 100 };
    expect((await post('/line', { frequencyHz: 7.1e6, line: rlgc, loadOhm: 2000, powerW: 1500 }).expect(200)).body.cautions).toHaveLength(1);
    // RG-213 is rated 5,000 V RMS in the catalog; a 300 V connector on it is what limits the run.
    const catalog = await post('/line', { frequencyHz: 7.1e6, line: { cableId: 'rg-213', lengthM: 30 }, loadOhm: 2000, powerW: 1500 }).expect(200);
    expect(catalog.body.cautions).toEqual([]);
    const connector = await post('/line', { frequencyHz: 7.1e6, line: { cableId: 'rg-213', lengthM: 30, maxVoltageRmsV: 300 }, loadOhm: 2000, powerW: 1500 }).expect(200);
    expect(connector.body.cautions).toHaveLength(1);
    // A given rating never raises a cable's own: RG-8X is rated 600 V RMS in the catalog.
    const raised = await post('/line', { frequencyHz: 7.1e6, line: { cableId: 'rg-8x', lengthM: 30, maxVoltageRmsV: 1e9 }, loadOhm: 2000, powerW: 1500 }).expect(200);
    expect(raised.body.peaks.maxVoltageV).toBeGreaterThan(600);
    expect(raised.body.cautions).toHaveLength(1);
    expect(raised.body.cautions[0]).toContain('rating of 600 V RMS');
    await post('/line', { frequencyHz: 7.1e6, line: { ...spec, maxVoltageRmsV: 0 }, loadOhm: 2000 }).expect(422);
  });

  it('cautions that the bare conductors of an unrated balanced line carry a high voltage', async () => {
    // 1,500 W into 30 m of 450 Ω window line ending in 3,150 Ω (SWR 7 at the load). By hand, for a
    // nearly lossless line: Vmax ≈ √(P·Z0·SWR) = √(1500 · 450 · 7) ≈ 2,174 V RMS (common practice).
    const res = await post('/line', { frequencyHz: 7.1e6, line: { cableId: 'window-line-450', lengthM: 30 }, loadOhm: 3150, powerW: 1500 }).expect(200);
    expect(res.body.peaks.maxVoltageV).toBeGreaterThan(2100);
    expect(res.body.peaks.maxVoltageV).toBeLessThan(2200);
    expect(res.body.cautions).toHaveLength(1);
    expect(res.body.cautions[0]).toMatch(/450 Ω window line reaches 21\d\d V/);
    expect(res.body.cautions[0]).toMatch(/conductors are bare/);
    expect(res.body.cautions[0]).toMatch(/licensed practice/);
    // Below the 500 V threshold (100 W matched: √(100 · 450) ≈ 212 V) it says nothing.
    expect((await post('/line', { frequencyHz: 7.1e6, line: { cableId: 'window-line-450', lengthM: 30 }, loadOhm: 450, powerW: 100 }).expect(200)).body.cautions).toEqual([]);
  });

  it('says how to describe a line when it is neither an object nor sections, and only "too small" for no sections', async () => {
    const text = await post('/line', { frequencyHz: 7.1e6, line: 'rg-213', loadOhm: 50 }).expect(400);
    expect(text.body.errors).toEqual([{ field: 'line', message: expect.stringMatching(/^describe the line as one object .* or as an array of sections/) }]);
    const none = await post('/line', { frequencyHz: 7.1e6, line: [], loadOhm: 50 }).expect(422);
    expect(none.body.errors).toEqual([{ field: 'line', message: expect.stringMatching(/>=1/) }]);
  });

  describe('refuses impossible lines with a 422 naming the field', () => {
    it.each([
      [{ impedanceOhm: 50, velocityFactor: 1.2, lossDbPer100m: 2, lengthM: 10 }, 'line.velocityFactor'],
      [{ cableId: 'no-such-cable', lengthM: 10 }, 'line.cableId'],
      [{ impedanceOhm: 50, velocityFactor: 0.66, lossDbPer100m: 2, lengthM: -1 }, 'line.lengthM'],
    ])('%j → %s', async (line, field) => {
      const res = await post('/line', { frequencyHz: 14e6, line, loadOhm: 50 }).expect(422);
      expect(res.body.errors.map((e: { field: string }) => e.field)).toContain(field);
    });
  });

  describe('refuses a line whose fields do not make one of its forms with a 400 naming the field', () => {
    it.each([
      [{ impedanceOhm: 50, velocityFactor: 0.66, lossDbPer100m: 2, lengthM: 10, lengthFt: 30 }, 'line.lengthFt'],
      [{ impedanceOhm: 50, velocityFactor: 0.66, lengthM: 10 }, 'line.lossDbPer100m'],
      [{ cableId: 'rg-213', impedanceOhm: 50, lengthM: 10 }, 'line.impedanceOhm'],
    ])('%j → %s', async (line, field) => {
      const res = await post('/line', { frequencyHz: 14e6, line, loadOhm: 50 }).expect(400);
      expect(res.body.errors.map((e: { field: string }) => e.field)).toContain(field);
    });
  });
});

describe('POST /api/v1/refer', () => {
  it('moves a transmitter-end reading to the antenna through the matched loss', async () => {
    // Handbook method: |Γ_load| = |Γ_source| / 10^(−L/10). 3 dB, SWR 1.5 (|Γ| 0.2) → |Γ_load| ≈ 0.399.
    const res = await post('/refer', { matchedLossDb: 3, direction: 'inputToLoad', reading: { swr: 1.5 } }).expect(200);
    expect(res.body.atLoad.reflectionMagnitude).toBeCloseTo(0.2 / 10 ** -0.3, 12);
    expect(res.body.atInput.swr).toBeCloseTo(1.5, 12);
  });

  it('refuses readings that the stated loss makes impossible, saying why', async () => {
    const res = await post('/refer', { matchedLossDb: 6, direction: 'inputToLoad', reading: { forwardPowerW: 100, reflectedPowerW: 30 } }).expect(422);
    expect(res.body.errors[0].field).toBe('reading.reflectedPowerW');
    expect(res.body.detail).toMatch(/cannot both be right/i);
  });

  it('takes the loss from a line description', async () => {
    const res = await post('/refer', { frequencyHz: 7.1e6, line: { cableId: 'rg-58', lengthM: 40 }, direction: 'inputToLoad', reading: { forwardPowerW: 100, reflectedPowerW: 1 } }).expect(200);
    expect(res.body.matchedLossDb).toBeGreaterThan(0);
    expect(res.body.lineDissipationW).toBeGreaterThan(0);
  });

  it('gives the voltage and current maxima and the same cautions as /line when the reading carries power', async () => {
    // By hand, lossless 450 Ω line, 2,000 W forward and 500 W reflected (|Γ| 0.5, SWR 3, 1,500 W net):
    // Vmax = √Z0·(√Pf + √Pr) = √(P·Z0·SWR) = √(1500 · 450 · 3) = 1,423.0 V; Imax = √(P·SWR/Z0) = √10 A (common practice).
    const line = { impedanceOhm: 450, velocityFactor: 0.91, lossDbPer100m: 0, lengthM: 30 };
    const res = await post('/refer', { frequencyHz: 7.1e6, line, direction: 'inputToLoad', reading: { forwardPowerW: 2000, reflectedPowerW: 500 } }).expect(200);
    expect(res.body.peaks.maxVoltageV).toBeCloseTo(Math.sqrt(1500 * 450 * 3), 9);
    expect(res.body.peaks.maxCurrentA).toBeCloseTo(Math.sqrt(10), 12);
    expect(res.body.cautions).toHaveLength(1);
    expect(res.body.cautions[0]).toMatch(/reaches 1423 V, and no voltage rating is known/);
    // The window line of the catalog: bare conductors, as /line says.
    const window = await post('/refer', { frequencyHz: 7.1e6, line: { cableId: 'window-line-450', lengthM: 30 }, direction: 'inputToLoad', reading: { forwardPowerW: 2000, reflectedPowerW: 500 } }).expect(200);
    expect(window.body.cautions[0]).toMatch(/conductors are bare/);
    // /line on a load with the same SWR at the same power reaches no more than the envelope /refer gives.
    const through = await post('/line', { frequencyHz: 7.1e6, line: { cableId: 'window-line-450', lengthM: 30 }, loadOhm: 1350, powerW: 1500 }).expect(200);
    expect(through.body.peaks.maxVoltageV).toBeLessThanOrEqual(window.body.peaks.maxVoltageV * (1 + 1e-9));
    expect(through.body.peaks.maxVoltageV / window.body.peaks.maxVoltageV).toBeGreaterThan(0.97);
    // A rated cable is checked against its rating; an SWR reading or a bare matched loss carries no power.
    // √50 · (√5000 + √1250) ≈ 750 V RMS against RG-8X's 600 V.
    const rated = await post('/refer', { frequencyHz: 7.1e6, line: { cableId: 'rg-8x', lengthM: 30 }, direction: 'inputToLoad', reading: { forwardPowerW: 5000, reflectedPowerW: 1250 } }).expect(200);
    expect(rated.body.cautions[0]).toContain('rating of 600 V RMS');
    const swr = await post('/refer', { frequencyHz: 7.1e6, line, direction: 'inputToLoad', reading: { swr: 3 } }).expect(200);
    expect(swr.body.peaks).toBeUndefined();
    expect(swr.body.cautions).toEqual([]);
    const bare = await post('/refer', { matchedLossDb: 1, direction: 'inputToLoad', reading: { forwardPowerW: 2000, reflectedPowerW: 500 } }).expect(200);
    expect(bare.body.peaks).toBeUndefined();
  });

  it('wants either matchedLossDb or frequencyHz + line (400: the body does not fit either form)', async () => {
    await post('/refer', { direction: 'inputToLoad', reading: { swr: 2 } }).expect(400);
    await post('/refer', { matchedLossDb: 1, frequencyHz: 1e6, direction: 'inputToLoad', reading: { swr: 2 } }).expect(400);
  });
});

describe('POST /api/v1/match', () => {
  it('with powerW gives each element its voltage, current and reactive power, and a caution about ratings', async () => {
    // By hand (Q = √3 L-network, 200 Ω to 50 Ω at 100 W): series 1.4142 A and 122.47 V, shunt 141.42 V and 1.2247 A.
    const res = await post('/match', { frequencyHz: 7.1e6, loadOhm: 200, powerW: 100 }).expect(200);
    expect(res.body.cautions).toHaveLength(1);
    expect(res.body.cautions[0]).toMatch(/margin above them/);
    for (const s of res.body.solutions) {
      expect(s.sourceSide).toBe('series');
      const [series, shunt] = s.elements;
      expect(series.currentRmsA).toBeCloseTo(Math.SQRT2, 9);
      expect(series.voltageRmsV).toBeCloseTo(50 * Math.sqrt(3) * Math.SQRT2, 9);
      expect(shunt.voltageRmsV).toBeCloseTo(Math.sqrt(20000), 9);
      expect(shunt.voltagePeakV).toBeCloseTo(200, 9);
      expect(shunt.currentRmsA).toBeCloseTo(Math.sqrt(1.5), 9);
    }
    const plain = await post('/match', { frequencyHz: 7.1e6, loadOhm: 200 }).expect(200);
    expect(plain.body.cautions).toEqual([]);
    expect(plain.body.solutions[0].elements[0].voltageRmsV).toBeUndefined();
  });

  it('lists L-networks whose input is the source impedance', async () => {
    const res = await post('/match', { frequencyHz: 3.65e6, loadOhm: { re: 12, im: -30 } }).expect(200);
    expect(res.body.solutions.length).toBeGreaterThan(0);
    for (const s of res.body.solutions) {
      expect(s.inputOhm.re).toBeCloseTo(50, 8);
      expect(s.inputOhm.im).toBeCloseTo(0, 8);
    }
  });
});

describe('the cable catalog', () => {
  it('lists cables by trade designation with their source', async () => {
    const res = await request(ctx.app).get('/api/v1/cables').set(headers()).expect(200);
    expect(res.body.cables.length).toBeGreaterThanOrEqual(10);
    for (const c of res.body.cables) expect(c.source.length).toBeGreaterThan(0);
  });

  it('answers one cable, and 404 for an unknown one', async () => {
    await request(ctx.app).get('/api/v1/cables/rg-213').set(headers()).expect(200);
    const res = await request(ctx.app).get('/api/v1/cables/xyz').set(headers()).expect(404);
    expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
  });

  it('computes the loss of a length at a frequency', async () => {
    const res = await request(ctx.app).get('/api/v1/cables/rg-213/attenuation?frequencyHz=14200000&lengthM=50').set(headers()).expect(200);
    expect(res.body.lossDb).toBeCloseTo(res.body.lossDbPer100m / 2, 12);
    expect(res.body.lossDbPer100ft).toBeCloseTo(res.body.lossDbPer100m * 0.3048, 12);
  });

  it('refuses a missing or non-numeric frequency', async () => {
    await request(ctx.app).get('/api/v1/cables/rg-213/attenuation').set(headers()).expect(400);
    await request(ctx.app).get('/api/v1/cables/rg-213/attenuation?frequencyHz=abc').set(headers()).expect(400);
    await request(ctx.app).get('/api/v1/cables/rg-213/attenuation?frequencyHz=-5').set(headers()).expect(422);
  });
});

describe('the OpenAPI document', () => {
  it('describes every calculation endpoint with an example', async () => {
    const res = await request(ctx.app).get('/api/v1/openapi.json').expect(200);
    for (const path of ['/api/v1/mismatch', '/api/v1/reflection', '/api/v1/line', '/api/v1/refer', '/api/v1/match']) {
      const op = res.body.paths[path].post;
      expect(op.description.length).toBeGreaterThan(20);
      const ref: string = op.requestBody.content['application/json'].schema.$ref;
      const schema = res.body.components.schemas[ref.split('/').pop()!];
      expect(schema.example).toBeDefined();
    }
    expect(res.body.paths['/api/v1/cables/{id}/attenuation'].get).toBeDefined();
  });
});
