import { describe, expect, it } from 'vitest';
import { formatDb, formatFrequency, formatImpedance, formatLengthM, formatMhz, formatNumber, formatSwr, sweepStepHz } from './format.ts';

describe('number formatting for people', () => {
  it('keeps four significant digits by default', () => {
    expect(formatNumber(1.4999999)).toBe('1.500');
    expect(formatNumber(13.979400086720377)).toBe('13.98');
  });

  it('shows unbounded values (null in the API) as a dash', () => {
    expect(formatNumber(null)).toBe('—');
  });

  it('writes frequencies in MHz and impedances as R ± jX', () => {
    expect(formatFrequency(14_200_000)).toBe('14.2000 MHz');
    expect(formatImpedance({ re: 50, im: -12.5 })).toBe('50.00 − j12.50 Ω');
  });
});

describe('one precision per quantity, on every page', () => {
  it('gives SWR and dB two decimals, and lengths to the centimetre', () => {
    expect(formatSwr(1.19)).toBe('1.19 : 1');
    expect(formatSwr(1.2)).toBe('1.20 : 1');
    expect(formatSwr(null)).toBe('unbounded (total reflection)');
    expect(formatDb(2.6838)).toBe('2.68 dB');
    expect(formatLengthM(9)).toBe('9.00 m');
    expect(formatLengthM(26)).toBe('26.00 m');
  });

  it("writes frequencies in MHz with the digits the sweep's step needs", () => {
    expect(formatMhz(14_205_000)).toBe('14.205 MHz');
    expect(formatMhz(7_150_000, 25_000)).toBe('7.150 MHz');
    expect(formatMhz(7_150_500, 500)).toBe('7.1505 MHz');
    expect(sweepStepHz({ startHz: 7_000_000, stopHz: 7_300_000, pointCount: 13 })).toBe(25_000);
  });
});
