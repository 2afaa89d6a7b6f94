import type { Clock } from '../context.ts';
import { NO_CACHE_TALLY, type CacheTally } from '../metrics/app-metrics.ts';
import type { VerifiedKey } from './verify-key.ts';

/** A valid verification is reused for at most this long, even if no change is ever announced. */
export const KEY_CACHE_TTL_MS = 10_000;
/**
 * An entry older than this is verified again in the background when used, so a busy key is never
 * left to expire: without it, every request arriving in the round trip after the expiry would look
 * the key up on its own (measured: a p99 spike every 10 s under load).
 */
export const KEY_REFRESH_AFTER_MS = 7_500;
/** Entries kept at most; the oldest go first. */
const MAX_ENTRIES = 10_000;

interface Entry {
  key: VerifiedKey;
  storedAtMs: number;
}

/**
 * Valid key verifications by key hash, reused for a short time. Only valid outcomes are kept (a
 * refused key is looked up again every time). Entries are dropped when their key or owner changes
 * (`forget*`, driven by NOTIFY and by the local change routes) and all at once when announcements may
 * have been missed (`clear`). A fill that raced with a change is discarded: `generation` moves on every
 * forget/clear, and `put` only stores what was read under the generation it started with.
 */
export class VerifiedKeyCache {
  private readonly entries = new Map<string, Entry>();
  /** Verifications under way by key hash, shared by the requests that arrive meanwhile. */
  private readonly inflight = new Map<string, Promise<unknown>>();
  private _generation = 0;

  constructor(
    private readonly clock: Clock,
    private readonly tally: CacheTally = NO_CACHE_TALLY,
  ) {}

  get generation(): number {
    return this._generation;
  }

  get size(): number {
    return this.entries.size;
  }

  /** The cached verification, if fresh and the key has not expired at `now`. */
  get(hash: string, now: Date): VerifiedKey | undefined {
    const entry = this.entries.get(hash);
    // A miss is counted when the request goes on to wait for a verification (`shared`): a request may look twice.
    if (!entry) return undefined;
    if (this.clock.nowMs() - entry.storedAtMs > KEY_CACHE_TTL_MS || (entry.key.expiresAt && entry.key.expiresAt <= now)) {
      this.entries.delete(hash);
      return undefined;
    }
    this.tally.hit();
    return entry.key;
  }

  /** A cached entry is old enough to be verified again ahead of its expiry. */
  isAging(hash: string): boolean {
    const entry = this.entries.get(hash);
    return entry !== undefined && this.clock.nowMs() - entry.storedAtMs > KEY_REFRESH_AFTER_MS;
  }

  /**
   * One verification per key hash at a time: requests presenting the same key while one is under way
   * share its outcome. A forget or clear detaches the verifications under way, so that nobody who
   * arrives after a change is announced is given a read from before it.
   */
  shared<T>(hash: string, verify: () => Promise<T>): Promise<T> {
    // With an entry still there this is a refresh ahead of expiry, which no request waits for.
    if (!this.entries.has(hash)) this.tally.miss();
    const running = this.inflight.get(hash) as Promise<T> | undefined;
    if (running) return running;
    const started = verify().finally(() => {
      if (this.inflight.get(hash) === started) this.inflight.delete(hash);
    });
    this.inflight.set(hash, started);
    return started;
  }

  /** Drops one entry (a re-verification found the key no longer valid). */
  drop(hash: string): void {
    this.entries.delete(hash);
  }

  put(hash: string, key: VerifiedKey, generation: number): void {
    if (generation !== this._generation) return;
    if (this.entries.size >= MAX_ENTRIES) {
      const oldest = this.entries.keys().next().value;
      if (oldest !== undefined) this.entries.delete(oldest);
    }
    this.entries.set(hash, { key, storedAtMs: this.clock.nowMs() });
  }

  /** Applies a `key:<id>` or `user:<id>` announcement; anything else empties the cache. */
  forget(payload: string): void {
    this._generation++;
    this.inflight.clear();
    const [kind, id] = payload.split(':', 2);
    if (kind !== 'key' && kind !== 'user') {
      this.entries.clear();
      return;
    }
    for (const [hash, entry] of this.entries) {
      if ((kind === 'key' && entry.key.keyId === id) || (kind === 'user' && entry.key.userId === id)) this.entries.delete(hash);
    }
  }

  clear(): void {
    this._generation++;
    this.inflight.clear();
    this.entries.clear();
  }
}
