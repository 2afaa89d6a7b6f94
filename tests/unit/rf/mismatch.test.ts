import { describe, expect, it } from 'vitest';
import { mismatch, mismatchFromReflectionMagnitude, reflectionMagnitudeFrom, type MismatchInput } from '../../../shared/rf/mismatch.ts';
import { RfInputError } from '../../../shared/rf/errors.ts';

// Rows of the common SWR conversion table printed in amateur and RF handbooks (ARRL Handbook
// "SWR / return loss / mismatch loss" tables and many makers' "VSWR conversion charts"), values
// from memory, to the three decimals those tables print. Tolerance 0.0005 dB/unit = printed rounding.
const TABLE = [
  { swr: 1.1, rho: 0.048, rl: 26.444, ml: 0.01 },
  { swr: 1.2, rho: 0.091, rl: 20.828, ml: 0.036 },
  { swr: 1.5, rho: 0.2, rl: 13.979, ml: 0.177 },
  { swr: 2, rho: 0.333, rl: 9.542, ml: 0.512 },
  { swr: 3, rho: 0.5, rl: 6.021, ml: 1.249 },
] as const;

function expectFieldError(fn: () => unknown, field: string): void {
  try {
    fn();
  } catch (err) {
    expect(err).toBeInstanceOf(RfInputError);
    expect((err as RfInputError).field).toBe(field);
    expect((err as RfInputError).message.length).toBeGreaterThan(20);
    return;
  }
  throw new Error(`expected an RfInputError on ${field}`);
}

describe('mismatch figures agree with the handbook SWR conversion table', () => {
  for (const row of TABLE) {
    it(`gives |Γ| ${row.rho}, return loss ${row.rl} dB and mismatch loss ${row.ml} dB for SWR ${row.swr}`, () => {
      const m = mismatch({ swr: row.swr });
      expect(m.swr).toBe(row.swr);
      expect(Math.abs(m.reflectionMagnitude - row.rho)).toBeLessThanOrEqual(0.0005 + 1e-12);
      expect(Math.abs((m.returnLossDb as number) - row.rl)).toBeLessThanOrEqual(0.0005 + 1e-12);
      expect(Math.abs((m.mismatchLossDb as number) - row.ml)).toBeLessThanOrEqual(0.0005 + 1e-12);
    });
  }

  it('gives exactly |Γ| = 1/3 for SWR 2 (definition (S − 1)/(S + 1), IEEE Std 100 dictionary)', () => {
    expect(reflectionMagnitudeFrom({ swr: 2 })).toBeCloseTo(1 / 3, 15);
  });

  it('splits the forward power into reflected |Γ|² and transmitted 1 − |Γ|² (definition, common practice)', () => {
    const m = mismatchFromReflectionMagnitude(0.5);
    expect(m.reflectedPowerRatio).toBe(0.25);
    expect(m.transmittedPowerRatio).toBe(0.75);
  });
});

describe('every input form yields the same |Γ|', () => {
  // Each form below is the same load (|Γ| = 0.2, SWR 1.5) written the way a meter or table gives it;
  // the conversions are the textbook definitions (common practice).
  const forms: [string, MismatchInput][] = [
    ['SWR', { swr: 1.5 }],
    ['reflection magnitude', { reflectionMagnitude: 0.2 }],
    ['return loss', { returnLossDb: -20 * Math.log10(0.2) }],
    ['mismatch loss', { mismatchLossDb: -10 * Math.log10(0.96) }],
    ['reflected power ratio', { reflectedPowerRatio: 0.04 }],
    ['forward and reflected power (100 W forward, 4 W reflected)', { forwardPowerW: 100, reflectedPowerW: 4 }],
    ['forward and reflected detector voltage (10 V and 2 V)', { forwardVoltageV: 10, reflectedVoltageV: 2 }],
    ['standing-wave maximum and minimum (15 V and 10 V)', { maxVoltageV: 15, minVoltageV: 10 }],
  ];
  for (const [name, input] of forms) {
    it(`reads |Γ| = 0.2 from the ${name}`, () => {
      expect(reflectionMagnitudeFrom(input)).toBeCloseTo(0.2, 14);
      expect(mismatch(input).swr).toBeCloseTo(1.5, 13);
    });
  }

  it('reports the net power Pf − Pr when powers are given', () => {
    expect(mismatch({ forwardPowerW: 100, reflectedPowerW: 4 }).netPowerW).toBe(96);
    expect(mismatch({ swr: 2 }).netPowerW).toBeUndefined();
  });

  it('echoes the figure that was given exactly', () => {
    expect(mismatch({ returnLossDb: 20 }).returnLossDb).toBe(20);
    expect(mismatch({ mismatchLossDb: 0.1 }).mismatchLossDb).toBe(0.1);
    expect(mismatch({ maxVoltageV: 3, minVoltageV: 1 }).swr).toBe(3);
  });
});

describe('unbounded figures are null, never Infinity', () => {
  it('gives a null SWR and mismatch loss for a total reflection', () => {
    const m = mismatchFromReflectionMagnitude(1);
    expect(m.swr).toBeNull();
    expect(m.mismatchLossDb).toBeNull();
    expect(m.returnLossDb).toBe(0);
    expect(m.transmittedPowerRatio).toBe(0);
  });

  it('gives a null return loss for a perfect match', () => {
    const m = mismatch({ swr: 1 });
    expect(m.returnLossDb).toBeNull();
    expect(m.mismatchLossDb).toBe(0);
  });

  it('treats reflected power equal to forward power as a total reflection', () => {
    const m = mismatch({ forwardPowerW: 50, reflectedPowerW: 50 });
    expect(m.swr).toBeNull();
    expect(m.netPowerW).toBe(0);
  });

  it('treats a standing-wave minimum of 0 V as a total reflection', () => {
    expect(mismatch({ maxVoltageV: 20, minVoltageV: 0 }).swr).toBeNull();
  });

  it('keeps SWR finite for |Γ| one ulp below 1', () => {
    const swr = mismatchFromReflectionMagnitude(1 - Number.EPSILON / 2).swr as number;
    expect(Number.isFinite(swr)).toBe(true);
  });
});

describe('impossible readings are rejected with the field named', () => {
  const cases: [string, unknown, string][] = [
    ['an SWR below 1', { swr: 0.9 }, 'swr'],
    ['a NaN SWR', { swr: Number.NaN }, 'swr'],
    ['a reflection magnitude above 1', { reflectionMagnitude: 1.01 }, 'reflectionMagnitude'],
    ['a negative reflection magnitude', { reflectionMagnitude: -0.1 }, 'reflectionMagnitude'],
    ['a negative return loss', { returnLossDb: -3 }, 'returnLossDb'],
    ['a negative mismatch loss', { mismatchLossDb: -0.1 }, 'mismatchLossDb'],
    ['a reflected power ratio above 1', { reflectedPowerRatio: 1.5 }, 'reflectedPowerRatio'],
    ['a negative reflected power ratio', { reflectedPowerRatio: -0.5 }, 'reflectedPowerRatio'],
    ['more reflected than forward power', { forwardPowerW: 10, reflectedPowerW: 12 }, 'reflectedPowerW'],
    ['negative forward power', { forwardPowerW: -10, reflectedPowerW: 1 }, 'forwardPowerW'],
    ['negative reflected power', { forwardPowerW: 10, reflectedPowerW: -1 }, 'reflectedPowerW'],
    ['no power at all', { forwardPowerW: 0, reflectedPowerW: 0 }, 'forwardPowerW'],
    ['reflected power with no forward power', { forwardPowerW: 0, reflectedPowerW: 1 }, 'reflectedPowerW'],
    ['more reflected than forward voltage', { forwardVoltageV: 1, reflectedVoltageV: 2 }, 'reflectedVoltageV'],
    ['a negative detector voltage', { forwardVoltageV: -1, reflectedVoltageV: 0 }, 'forwardVoltageV'],
    ['a maximum below the minimum', { maxVoltageV: 1, minVoltageV: 2 }, 'minVoltageV'],
    ['a zero maximum', { maxVoltageV: 0, minVoltageV: 0 }, 'maxVoltageV'],
    ['a negative minimum', { maxVoltageV: 2, minVoltageV: -1 }, 'minVoltageV'],
    ['two readings at once', { swr: 2, returnLossDb: 10 }, 'returnLossDb'],
    ['forward power without reflected power', { forwardPowerW: 10 }, 'reflectedPowerW'],
    ['no reading at all', {}, 'swr'],
  ];
  for (const [name, input, field] of cases) {
    it(`rejects ${name} on '${field}'`, () => {
      expectFieldError(() => mismatch(input as MismatchInput), field);
    });
  }

  it('rejects |Γ| outside [0, 1] when building the figures directly', () => {
    expectFieldError(() => mismatchFromReflectionMagnitude(1.2), 'reflectionMagnitude');
  });
});
