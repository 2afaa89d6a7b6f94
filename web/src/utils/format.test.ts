import { describe, expect, it } from 'vitest';
import { formatFrequency, formatImpedance, formatNumber } from './format.ts';

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
