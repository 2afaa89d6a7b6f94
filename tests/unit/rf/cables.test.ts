import { describe, expect, it } from 'vitest';
import { CABLE_CATALOG, cableLossDbPer100m, findCable, type CableType } from '../../../shared/rf/cables.ts';
import { M_PER_FT } from '../../../shared/rf/constants.ts';
import { RfInputError } from '../../../shared/rf/errors.ts';

// Makers' names and trademarks for cable lines that must never appear in the catalog.
const BRAND_DENYLIST = [
  'lmr', 'heliax', 'belden', 'times microwave', 'andrew', 'commscope', 'ultraflex', 'aircell', 'ecoflex',
  'aircom', 'davis', 'wireman', 'superflex', 'cellflex', 'hyperflex', 'buryflex', 'messi', 'paolini',
  'alpha wire', 'huber', 'suhner', 'sucoflex', 'rfs', 'radiall', 'amphenol', 'harbour', 'pasternack',
];

function frequencyRange(cable: CableType): [number, number] {
  if (cable.attenuation.kind === 'table') {
    const pts = cable.attenuation.points;
    return [pts[0]!.frequencyHz, pts[pts.length - 1]!.frequencyHz];
  }
  return [1e6, 3e9];
}

describe('every catalog entry is complete and honest', () => {
  it('has about a dozen generic types with unique kebab-case ids', () => {
    expect(CABLE_CATALOG.length).toBeGreaterThanOrEqual(12);
    const ids = CABLE_CATALOG.map((c) => c.id);
    expect(new Set(ids).size).toBe(ids.length);
    for (const id of ids) expect(id).toMatch(/^[a-z0-9]+(-[a-z0-9]+)*$/);
  });

  for (const cable of CABLE_CATALOG) {
    it(`describes ${cable.designation} with a source, sane constants and loss rising with frequency`, () => {
      expect(cable.designation.length).toBeGreaterThan(2);
      expect(cable.source).toMatch(/from memory/);
      expect(cable.impedanceOhm).toBeGreaterThan(0);
      expect(cable.velocityFactor).toBeGreaterThan(0);
      expect(cable.velocityFactor).toBeLessThanOrEqual(1);
      if (cable.maxVoltageRmsV !== null) expect(cable.maxVoltageRmsV).toBeGreaterThan(0);
      const [lo, hi] = frequencyRange(cable);
      let previous = 0;
      for (let k = 0; k <= 40; k++) {
        const f = lo * (hi / lo) ** (k / 40);
        const loss = cableLossDbPer100m(cable, f);
        expect(loss).toBeGreaterThan(previous);
        previous = loss;
      }
      expect(findCable(cable.id)).toBe(cable);
    });
  }

  it('names the published specification or handbook table behind each entry, marked from memory', () => {
    for (const cable of CABLE_CATALOG) expect(cable.source, cable.id).toMatch(/(MIL-DTL-17|ARRL Handbook|ARRL Antenna Book).*from memory/);
  });

  it('says where each voltage rating comes from, or why there is none', () => {
    // The ratings drive the cautions of /line and /refer, so their provenance is stated like the loss figures'.
    for (const cable of CABLE_CATALOG) {
      if (cable.maxVoltageRmsV === null) expect(cable.maxVoltageSource, cable.id).toMatch(/^No (published )?rating/);
      else expect(cable.maxVoltageSource, cable.id).toMatch(/(MIL-DTL-17|makers').*from memory/);
    }
    // The MIL types' maximum operating voltages, from memory: RG-58 1,900 V, RG-213 5,000 V, RG-174 1,500 V.
    expect(findCable('rg-58')!.maxVoltageRmsV).toBe(1900);
    expect(findCable('rg-213')!.maxVoltageRmsV).toBe(5000);
    expect(findCable('rg-174')!.maxVoltageRmsV).toBe(1500);
    // The bare-conductor lines are marked, so an unrated one is cautioned about its conductors.
    expect(CABLE_CATALOG.filter((c) => c.balanced).map((c) => c.id).sort()).toEqual(['open-wire-600', 'twin-lead-300', 'window-line-450']);
  });

  it('names no brand or trademark anywhere', () => {
    const text = JSON.stringify(CABLE_CATALOG).toLowerCase();
    for (const brand of BRAND_DENYLIST) expect(text, brand).not.toMatch(new RegExp(`\\b${brand}\\b`));
  });
});

describe('catalog figures are plausible against commonly quoted values', () => {
  // Commonly quoted attenuation at 100 MHz (from memory, ±20 %): RG-58/U ≈ 4.6 dB/100 ft,
  // RG-213/U ≈ 2.1 dB/100 ft, 1/2-inch hardline ≈ 0.7 dB/100 ft.
  it.each([
    ['rg-58', 4.6],
    ['rg-213', 2.1],
    ['hardline-half-inch', 0.68],
  ] as const)('gives %s about %s dB/100 ft at 100 MHz', (id, dbPer100ft) => {
    const perFt = cableLossDbPer100m(findCable(id)!, 100e6) * M_PER_FT;
    expect(Math.abs(perFt / dbPer100ft - 1)).toBeLessThan(0.2);
  });

  it('orders coax by size: thinner cable loses more at 100 MHz (common practice)', () => {
    const order = ['rg-174', 'rg-58', 'rg-8x', 'rg-213', 'hardline-half-inch', 'hardline-seven-eighths-inch'];
    const losses = order.map((id) => cableLossDbPer100m(findCable(id)!, 100e6));
    for (let k = 1; k < losses.length; k++) expect(losses[k]).toBeLessThan(losses[k - 1] as number);
  });

  it('has open-wire line losing less than coax at HF (common practice)', () => {
    expect(cableLossDbPer100m(findCable('open-wire-600')!, 14e6)).toBeLessThan(cableLossDbPer100m(findCable('rg-213')!, 14e6));
  });
});

describe('attenuation models evaluate as defined', () => {
  it('computes k1·√fMHz + k2·fMHz', () => {
    const cable = findCable('rg-213')!;
    if (cable.attenuation.kind !== 'k1k2') throw new Error('expected a k1k2 model');
    expect(cableLossDbPer100m(cable, 144e6)).toBeCloseTo(cable.attenuation.k1 * 12 + cable.attenuation.k2 * 144, 12);
  });

  it('hits table points exactly and interpolates log-log between them (geometric mean at the geometric mid-frequency)', () => {
    const cable = findCable('twin-lead-300')!;
    if (cable.attenuation.kind !== 'table') throw new Error('expected a table model');
    const [p0, p1] = cable.attenuation.points;
    expect(cableLossDbPer100m(cable, p0!.frequencyHz)).toBe(p0!.lossDbPer100m);
    expect(cableLossDbPer100m(cable, p1!.frequencyHz)).toBe(p1!.lossDbPer100m);
    const mid = Math.sqrt(p0!.frequencyHz * p1!.frequencyHz);
    expect(cableLossDbPer100m(cable, mid)).toBeCloseTo(Math.sqrt(p0!.lossDbPer100m * p1!.lossDbPer100m), 12);
  });

  it("rejects a frequency outside a table on 'frequencyHz', naming the range", () => {
    try {
      cableLossDbPer100m(findCable('window-line-450')!, 1e9);
      throw new Error('expected a rejection');
    } catch (err) {
      expect(err).toBeInstanceOf(RfInputError);
      expect((err as RfInputError).field).toBe('frequencyHz');
      expect((err as RfInputError).message).toMatch(/1000000 Hz to 300000000 Hz/);
    }
  });

  it('rejects an account-defined table with a zero loss instead of producing NaN', () => {
    const bad: CableType = {
      id: 'custom',
      designation: 'custom',
      impedanceOhm: 50,
      velocityFactor: 0.7,
      attenuation: { kind: 'table', points: [{ frequencyHz: 1e6, lossDbPer100m: 0 }, { frequencyHz: 1e7, lossDbPer100m: 1 }] },
      maxVoltageRmsV: null,
      source: 'account',
    };
    expect(() => cableLossDbPer100m(bad, 3e6)).toThrow(RfInputError);
  });
});
