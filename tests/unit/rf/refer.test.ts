import { describe, expect, it } from 'vitest';
import { RfInputError } from '../../../shared/rf/errors.ts';
import { lineFromLossSpec, transformLine } from '../../../shared/rf/line.ts';
import { handbookTotalLossDb, referReading } from '../../../shared/rf/refer.ts';

// Method: the matched-loss referral of the amateur handbooks (ARRL Antenna Book, transmission-line
// chapter, from memory): the reflected wave crosses the line twice, so |Γ| at the transmitter is
// |Γ| at the load times the one-way power ratio a = 10^(−ML/10). Expected values below are hand
// arithmetic from that rule.

function fieldOf(fn: () => unknown): string | undefined {
  try {
    fn();
  } catch (err) {
    if (err instanceof RfInputError) return err.field;
    throw err;
  }
  return undefined;
}

describe('readings at the transmitter are referred to the load', () => {
  it('turns SWR 1.5 at the transmitter into SWR 2.33 at the load through a 3 dB line', () => {
    // |Γs| = 0.2; a = 10^(−0.3) = 0.501187; |ΓL| = 0.2/0.501187 = 0.399052; SWR = 1.399052/0.600948 = 2.32808.
    const r = referReading({ matchedLossDb: 3, direction: 'inputToLoad', reading: { swr: 1.5 } });
    expect(r.atInput.swr).toBe(1.5);
    expect(r.atInput.reflectionMagnitude).toBeCloseTo(0.2, 15);
    expect(r.atLoad.reflectionMagnitude).toBeCloseTo(0.399052463, 9);
    expect(r.atLoad.swr).toBeCloseTo(2.328077539, 9);
  });

  it('turns 100 W forward / 4 W reflected at the transmitter into 79.43 W / 5.04 W at the load through 1 dB', () => {
    // a = 10^(−0.1) = 0.794328: Pf,load = 79.4328 W, Pr,load = 4/0.794328 = 5.03570 W,
    // net 74.3971 W against 96 W sent, so the line burns 21.6029 W.
    const r = referReading({ matchedLossDb: 1, direction: 'inputToLoad', reading: { forwardPowerW: 100, reflectedPowerW: 4 } });
    expect(r.atLoad.forwardPowerW).toBeCloseTo(79.4328235, 6);
    expect(r.atLoad.reflectedPowerW).toBeCloseTo(5.0357016, 6);
    expect(r.atLoad.netPowerW).toBeCloseTo(74.3971218, 6);
    expect(r.atInput.netPowerW).toBe(96);
    expect(r.lineDissipationW).toBeCloseTo(21.6028782, 6);
    expect(r.totalLossDb as number).toBeCloseTo(10 * Math.log10(96 / 74.3971218), 6);
  });

  it('lets an open antenna look like SWR 3.01 at the transmitter through 3 dB of loss', () => {
    const r = referReading({ matchedLossDb: 3, direction: 'loadToInput', reading: { forwardPowerW: 50, reflectedPowerW: 50 } });
    expect(r.atLoad.swr).toBeNull();
    expect(r.totalLossDb).toBeNull();
    // |Γs| = a = 0.501187, SWR = 1.501187/0.498813 = 3.0095.
    expect(r.atInput.swr).toBeCloseTo(3.0095, 4);
  });
});

describe('the handbook total-loss formula', () => {
  it('gives 1.504 dB for 1 dB of matched loss and SWR 3 at the load', () => {
    // (a² − ρ²)/(a(1 − ρ²)) with a = 1.258925, ρ = 0.5: 1.334893/0.944194 → 1.50385 dB (hand arithmetic).
    expect(handbookTotalLossDb(1, 0.5) as number).toBeCloseTo(1.5038525, 7);
  });

  it('agrees with the full wave solution for a real-Z0 line, an independent route to the same physics', () => {
    const f = 10e6;
    const line = lineFromLossSpec({ impedanceOhm: { re: 50, im: 0 }, velocityFactor: 0.66, lossDbPer100m: 2, lengthM: 50 }, f);
    const r = transformLine(line, { re: 150, im: 0 }, f);
    expect(r.matchedLossDb).toBeCloseTo(1, 13);
    expect(r.totalLossDb as number).toBeCloseTo(handbookTotalLossDb(1, 0.5) as number, 12);
  });

  it('equals the referral total loss', () => {
    const r = referReading({ matchedLossDb: 2.2, direction: 'loadToInput', reading: { swr: 4 } });
    expect(r.totalLossDb).toBe(handbookTotalLossDb(2.2, r.atLoad.reflectionMagnitude));
  });

  it('is null for a total reflection and rejects |Γ| above 1', () => {
    expect(handbookTotalLossDb(1, 1)).toBeNull();
    expect(fieldOf(() => handbookTotalLossDb(1, 1.1))).toBe('reflectionMagnitude');
  });
});

describe('readings that cannot match the stated loss are rejected', () => {
  it("rejects SWR 4 at the transmitter on a 3 dB line on 'reading.swr', saying the two cannot both be right", () => {
    // |Γs| = 0.6 would need |ΓL| = 0.6/0.501 = 1.197 > 1.
    try {
      referReading({ matchedLossDb: 3, direction: 'inputToLoad', reading: { swr: 4 } });
      throw new Error('expected a rejection');
    } catch (err) {
      expect(err).toBeInstanceOf(RfInputError);
      expect((err as RfInputError).field).toBe('reading.swr');
      expect((err as RfInputError).message).toMatch(/cannot both be right/);
      expect((err as RfInputError).message).toMatch(/bad antenna look good/);
    }
  });

  it("rejects 30 W reflected of 100 W through 3 dB on 'reading.reflectedPowerW'", () => {
    expect(fieldOf(() => referReading({ matchedLossDb: 3, direction: 'inputToLoad', reading: { forwardPowerW: 100, reflectedPowerW: 30 } }))).toBe('reading.reflectedPowerW');
  });

  it.each([
    ['an SWR below 1', { matchedLossDb: 1, direction: 'inputToLoad', reading: { swr: 0.5 } }, 'reading.swr'],
    ['a negative line loss', { matchedLossDb: -1, direction: 'inputToLoad', reading: { swr: 2 } }, 'matchedLossDb'],
    ['more reflected than forward power', { matchedLossDb: 1, direction: 'loadToInput', reading: { forwardPowerW: 1, reflectedPowerW: 2 } }, 'reading.reflectedPowerW'],
    ['no power at all', { matchedLossDb: 1, direction: 'loadToInput', reading: { forwardPowerW: 0, reflectedPowerW: 0 } }, 'reading.forwardPowerW'],
    ['a negative forward power', { matchedLossDb: 1, direction: 'loadToInput', reading: { forwardPowerW: -3, reflectedPowerW: 0 } }, 'reading.forwardPowerW'],
    ['an unknown direction', { matchedLossDb: 1, direction: 'sideways', reading: { swr: 2 } }, 'direction'],
    ['SWR and powers together', { matchedLossDb: 1, direction: 'loadToInput', reading: { swr: 2, forwardPowerW: 5, reflectedPowerW: 1 } }, 'reading.swr'],
  ] as const)('rejects %s', (_name, args, field) => {
    expect(fieldOf(() => referReading(args as unknown as Parameters<typeof referReading>[0]))).toBe(field);
  });

  it('accepts a reading that puts the load exactly at total reflection', () => {
    const a = 10 ** -0.3;
    const r = referReading({ matchedLossDb: 3, direction: 'inputToLoad', reading: { forwardPowerW: 100, reflectedPowerW: 100 * a * a } });
    expect(r.atLoad.reflectionMagnitude).toBe(1);
    expect(r.atLoad.swr).toBeNull();
  });
});
