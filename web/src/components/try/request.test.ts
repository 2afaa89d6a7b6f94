import { describe, expect, it } from 'vitest';
import { convertLength, convertLossPer100, curlCommand, mhzToHz, requestUrl, scaled, type TryRequest } from './request.ts';

const mismatch: TryRequest = { endpoint: 'mismatch', method: 'POST', path: '/api/v1/mismatch', body: { forwardPowerW: 100, reflectedPowerW: 4 } };

describe('the request written out for people', () => {
  it('turns MHz into whole hertz without binary noise', () => {
    expect(mhzToHz(14.2)).toBe(14_200_000);
    expect(mhzToHz(7.1)).toBe(7_100_000);
  });

  it('turns µH, µS and pF per metre into SI units without binary noise', () => {
    expect(0.21 * 1e-6).toBe(2.0999999999999997e-7); // the noise it removes
    expect(scaled(0.21, 1e-6)).toBe(2.1e-7);
    expect(scaled(0.25, 1e-6)).toBe(2.5e-7);
    expect(scaled(100, 1e-12)).toBe(1e-10);
    expect(scaled(0, 1e-6)).toBe(0);
  });

  it('writes a POST as curl with the body as sent', () => {
    const text = curlCommand('http://127.0.0.1:8080', mismatch, null);
    expect(text).toContain("curl -sS -X POST 'http://127.0.0.1:8080/api/v1/mismatch'");
    expect(text).toContain('"Authorization: Bearer $GAMMALINE_KEY"');
    expect(text).toContain(`-d '{"forwardPowerW":100,"reflectedPowerW":4}'`);
  });

  it('places a pasted key in the command, quoted for the shell', () => {
    expect(curlCommand('http://h', mismatch, "gml_a'b")).toContain(`-H 'Authorization: Bearer gml_a'\\''b'`);
  });

  it('writes a GET with its query string', () => {
    const get: TryRequest = { endpoint: 'attenuation', method: 'GET', path: '/api/v1/cables/rg-213/attenuation', cableId: 'rg-213', query: { frequencyHz: 14_200_000, lengthFt: 100 } };
    expect(requestUrl('http://h', get)).toBe('http://h/api/v1/cables/rg-213/attenuation?frequencyHz=14200000&lengthFt=100');
    expect(curlCommand('http://h', get, null)).not.toContain('-X POST');
  });
});

describe('a batch written out as curl', () => {
  const batch = (count: number): TryRequest => ({
    endpoint: 'batch',
    method: 'POST',
    path: '/api/v1/batch',
    body: { items: Array.from({ length: count }, (_, i) => ({ op: 'mismatch', input: { swr: 1 + i / 1000 } })) },
  });

  it('pipes a few items as NDJSON lines into curl', () => {
    const text = curlCommand('http://h', batch(2), null);
    expect(text).toContain(`printf '%s\\n' '{"op":"mismatch","input":{"swr":1}}' '{"op":"mismatch","input":{"swr":1.001}}' |`);
    expect(text).toContain("-H 'Content-Type: application/x-ndjson'");
    expect(text).toContain('--data-binary @-');
  });

  it('names a file for a large batch instead of holding thousands of items', () => {
    const text = curlCommand('http://h', batch(5000), null);
    expect(text).toContain('--data-binary @batch.ndjson');
    expect(text).toContain('holds the 5,000 items');
    expect(text.length).toBeLessThan(500);
  });
});

describe('the metres/feet switch', () => {
  it('converts lengths and losses per 100 m and back with the international foot (0.3048 m)', () => {
    expect(convertLength(12, 'metric', 'imperial')).toBe(39.3701);
    expect(convertLength(100, 'imperial', 'metric')).toBe(30.48);
    expect(convertLossPer100(2, 'metric', 'imperial')).toBe(0.6096);
    expect(convertLossPer100(0.6096, 'imperial', 'metric')).toBe(2);
    expect(convertLength(12, 'metric', 'metric')).toBe(12);
  });
});
