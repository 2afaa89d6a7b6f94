import type { Logger } from 'pino';
import type pg from 'pg';
import type { Database } from '../db/client.ts';
import { LastUsedRecorder } from '../quota/last-used.ts';
import { KeyLeases, QUOTA_RECLAIM_CHANNEL, QUOTA_RETURNED_CHANNEL } from '../quota/key-leases.ts';
import { VerifiedKeyCache } from './key-cache.ts';
import { KeyChangeListener } from './key-changes.ts';

/** The per-process helpers of the key hot path, one set per database pool. */
export interface KeyServices {
  cache: VerifiedKeyCache;
  listener: KeyChangeListener;
  /** Quota units reserved in blocks and spent in memory, with buffered usage records. */
  leases: KeyLeases;
  lastUsed: LastUsedRecorder;
  /** The cache may be trusted only while announcements are known to arrive. */
  cacheUsable(): boolean;
  /** Flushes pending usage and closes the listening connection; idempotent. */
  stop(): Promise<void>;
}

const services = new WeakMap<Database, KeyServices>();

/** `application_name` of the listening connections, so operators can find them in pg_stat_activity. */
export const KEY_LISTENER_APPLICATION = 'gammaline-key-listener';

/**
 * The key services of this database handle, started on first use. Apps built from the same handle
 * share them, so one process has one listening connection and one spend queue per key.
 */
export function keyServicesFor(database: Database, logger: Logger): KeyServices {
  const existing = services.get(database);
  if (existing) return existing;
  const cache = new VerifiedKeyCache();
  const leases = new KeyLeases(database.db, logger);
  const listener = new KeyChangeListener({ ...(database.pool.options as pg.ClientConfig), application_name: KEY_LISTENER_APPLICATION }, {
    changed: (payload) => {
      cache.forget(payload);
      // A changed key (new quota, revoked) gives its reserved units back, so the change applies at once.
      if (payload.startsWith('key:')) void leases.giveBackKey(payload.slice(4));
    },
    other: { channels: [QUOTA_RECLAIM_CHANNEL, QUOTA_RETURNED_CHANNEL], notified: (channel, payload) => leases.notified(channel, payload) },
    // Anything announced while the connection was down is unknown: start from an empty cache, and give
    // reserved units back so that a quota changed meanwhile applies and nobody waits on us for them.
    connected: () => {
      cache.clear();
      void leases.giveBackAll();
    },
    lost: () => {
      cache.clear();
      void leases.giveBackAll();
    },
  }, logger);
  const lastUsed = new LastUsedRecorder(database.db, logger);
  let stopping: Promise<void> | undefined;
  const created: KeyServices = {
    cache,
    listener,
    leases,
    lastUsed,
    cacheUsable: () => listener.healthy,
    // Units go back and usage is written while the listener still hears reclaim requests.
    stop: () => (stopping ??= leases.stop().catch(() => {}).then(() => Promise.all([listener.stop(), lastUsed.stop()])).then(() => {})),
  };
  services.set(database, created);
  closeWithPool(database.pool, created);
  listener.start();
  lastUsed.start();
  leases.start();
  return created;
}

/** Stops the key services of a database handle, if it has any (graceful shutdown). */
export async function stopKeyServices(database: Database): Promise<void> {
  await services.get(database)?.stop();
}

/**
 * Tests and tools build apps from a bare database handle and end them by closing its pool, so
 * closing the pool is the one shutdown signal every owner sends: pending usage is flushed and the
 * listening connection closed first.
 */
function closeWithPool(pool: pg.Pool, s: KeyServices): void {
  const end = pool.end.bind(pool) as () => Promise<void>;
  const endAfterStop = (callback?: () => void): Promise<void> | void => {
    const done = s.stop().catch(() => {}).then(end);
    if (!callback) return done;
    void done.then(callback, callback);
  };
  pool.end = endAfterStop as pg.Pool['end'];
}
