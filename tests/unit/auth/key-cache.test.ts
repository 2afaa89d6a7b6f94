import { describe, expect, it, vi } from 'vitest';
import { KEY_CACHE_TTL_MS, KEY_REFRESH_AFTER_MS, VerifiedKeyCache } from '../../../server/auth/key-cache.ts';
import type { VerifiedKey } from '../../../server/auth/verify-key.ts';
import { systemClock } from '../../../server/context.ts';

const key = { keyId: 'k1', userId: 'u1', organisationId: 'o1' } as VerifiedKey;
const deferred = <T>() => {
  let resolve!: (v: T) => void;
  const promise = new Promise<T>((r) => (resolve = r));
  return { promise, resolve };
};

/** A clock the test sets by hand (the cache reads time only through its clock). */
function clockAt(ms: number) {
  let now = ms;
  return {
    now: () => new Date(now),
    nowMs: () => now,
    set(at: number) {
      now = at;
    },
  };
}

describe('the verified-key cache', () => {
  it('lets concurrent verifications of one key share a single lookup', async () => {
    const cache = new VerifiedKeyCache(systemClock);
    const lookup = deferred<string>();
    const verify = vi.fn(() => lookup.promise);
    const first = cache.shared('h', verify);
    const second = cache.shared('h', verify);
    expect(verify).toHaveBeenCalledTimes(1);
    lookup.resolve('valid');
    expect(await Promise.all([first, second])).toEqual(['valid', 'valid']);
    // Finished lookups are not reused: the next miss asks again.
    await cache.shared('h', verify);
    expect(verify).toHaveBeenCalledTimes(2);
  });

  it('never hands a read from before an announced change to a request that arrives after it', async () => {
    const cache = new VerifiedKeyCache(systemClock);
    const before = deferred<string>();
    const early = cache.shared('h', () => before.promise);
    cache.forget('key:k1');
    const late = cache.shared('h', async () => 'revoked');
    before.resolve('valid');
    expect(await early).toBe('valid');
    expect(await late).toBe('revoked');
  });

  it('marks an entry for renewal before it expires, and forgets it at expiry', () => {
    const clock = clockAt(1_000_000);
    const cache = new VerifiedKeyCache(clock);
    cache.put('h', key, cache.generation);
    expect(cache.isAging('h')).toBe(false);
    clock.set(1_000_000 + KEY_REFRESH_AFTER_MS + 1);
    expect(cache.isAging('h')).toBe(true);
    expect(cache.get('h', clock.now())).toBe(key);
    // Renewed: young again.
    cache.put('h', key, cache.generation);
    expect(cache.isAging('h')).toBe(false);
    clock.set(1_000_000 + KEY_REFRESH_AFTER_MS + 1 + KEY_CACHE_TTL_MS + 1);
    expect(cache.get('h', clock.now())).toBeUndefined();
    expect(KEY_REFRESH_AFTER_MS).toBeLessThan(KEY_CACHE_TTL_MS);
  });

  it('drops an entry whose key a renewal found no longer valid', () => {
    const cache = new VerifiedKeyCache(systemClock);
    cache.put('h', key, cache.generation);
    cache.drop('h');
    expect(cache.get('h', new Date())).toBeUndefined();
  });
});
