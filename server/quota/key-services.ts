import type { Logger } from 'pino';
import type pg from 'pg';
import type { Clock } from '../context.ts';
import type { Database } from '../db/client.ts';
import { VerifiedKeyCache } from '../auth/key-cache.ts';
import type { AppMetrics } from '../metrics/app-metrics.ts';
import { KeyChangeListener } from '../auth/key-changes.ts';
import { LastUsedRecorder } from './last-used.ts';
import { KeyLeases, QUOTA_RECLAIM_CHANNEL, QUOTA_RETURNED_CHANNEL } from './key-leases.ts';

/** The per-app helpers of the key hot path; `createApp` starts one set and stops it in `close()`. */
export interface KeyServices {
  cache: VerifiedKeyCache;
  listener: KeyChangeListener;
  /** Quota units reserved in blocks and spent in memory, with buffered usage records. */
  leases: KeyLeases;
  lastUsed: LastUsedRecorder;
  /** The cache may be trusted only while announcements are known to arrive. */
  cacheUsable(): boolean;
  /** Gives unspent units back, flushes pending usage and closes the listening connection; idempotent. */
  stop(): Promise<void>;
}

/** `application_name` of the listening connections, so operators can find them in pg_stat_activity. */
export const KEY_LISTENER_APPLICATION = 'gammaline-key-listener';

/**
 * Starts the key services of one app: its own listening connection, lease pool and write-behind
 * timers. Two apps on one database handle are two holders of leases, like two processes.
 */
export function startKeyServices(deps: { database: Database; logger: Logger; clock: Clock; metrics?: AppMetrics }): KeyServices {
  const { database, logger, clock, metrics } = deps;
  const cache = new VerifiedKeyCache(clock, metrics?.keyCache);
  const leases = new KeyLeases(database.db, logger, clock, metrics?.quota);
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
  }, logger, clock);
  const lastUsed = new LastUsedRecorder(database.db, logger);
  let stopping: Promise<void> | undefined;
  const services: KeyServices = {
    cache,
    listener,
    leases,
    lastUsed,
    cacheUsable: () => listener.healthy,
    // Units go back and usage is written while the listener still hears reclaim requests.
    stop: () => (stopping ??= leases.stop().catch(() => {}).then(() => Promise.all([listener.stop(), lastUsed.stop()])).then(() => {})),
  };
  listener.start();
  lastUsed.start();
  leases.start();
  return services;
}
