import { describe, expect, it } from 'vitest';
import { MAX_ORIGINS, parseOrigins } from './origins.ts';

describe('origins typed one per line', () => {
  it('are read as exact origins, blank lines and surrounding spaces ignored', () => {
    expect(parseOrigins('https://log.example.org\n\n  http://127.0.0.1:8088  \n')).toEqual({ origins: ['https://log.example.org', 'http://127.0.0.1:8088'] });
    expect(parseOrigins('')).toEqual({ origins: [] });
  });

  it('are refused with the form browsers send when written otherwise', () => {
    expect(parseOrigins('https://Log.example.org/').problem).toContain('https://log.example.org:');
    expect(parseOrigins('https://log.example.org:443').problem).toContain('as https://log.example.org:');
  });

  it('are refused when they name no web origin, repeat, or are too many', () => {
    expect(parseOrigins('log.example.org').problem).toMatch(/not an origin/);
    expect(parseOrigins('ftp://files.example.org').problem).toMatch(/not an origin/);
    expect(parseOrigins('https://a.example\nhttps://a.example').problem).toMatch(/once/);
    const many = Array.from({ length: MAX_ORIGINS + 1 }, (_, i) => `https://site${i}.example`).join('\n');
    expect(parseOrigins(many).problem).toMatch(/At most/);
  });
});
