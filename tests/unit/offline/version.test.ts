import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { APP_VERSION as SERVER_VERSION } from '../../../server/config.ts';
import { APP_VERSION } from '../../../shared/version.ts';

// @gammaline/calc is published under shared/version.ts's APP_VERSION and says which release's answers
// it reproduces: it must be the version the server and package.json carry.

describe('the version the offline package carries', () => {
  it('is the app version of package.json and server/config.ts', () => {
    const pkg = JSON.parse(readFileSync(new URL('../../../package.json', import.meta.url), 'utf8')) as { version: string };
    expect(APP_VERSION).toBe(pkg.version);
    expect(APP_VERSION).toBe(SERVER_VERSION);
  });
});
