import { describe, expect, it } from 'vitest';
import { formatDuration } from './duration.ts';

describe('formatDuration', () => {
  it('shows the two largest units', () => {
    expect(formatDuration(3725)).toBe('1 h 2 min');
    expect(formatDuration(3 * 86_400 + 4 * 3600 + 59)).toBe('3 d 4 h');
    expect(formatDuration(725.9)).toBe('12 min 5 s');
  });

  it('keeps a zero second unit after a larger one', () => {
    expect(formatDuration(86_400)).toBe('1 d 0 h');
  });

  it('shows short and empty durations in seconds', () => {
    expect(formatDuration(0)).toBe('0 s');
    expect(formatDuration(42)).toBe('42 s');
  });

  it('says unknown for values that are not a duration', () => {
    expect(formatDuration(-1)).toBe('unknown');
    expect(formatDuration(Number.NaN)).toBe('unknown');
  });
});
