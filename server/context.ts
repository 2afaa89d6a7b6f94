import type { Logger } from 'pino';
import type { AppConfig } from './config.ts';
import type { Database } from './db/client.ts';
import type { Mailer } from './mail/mailer.ts';
import type { AppMetrics } from './metrics/app-metrics.ts';
import type { KeyServices } from './quota/key-services.ts';
import type { Meter } from './quota/meter.ts';

/**
 * The one source of time for the app and every component it builds (key cache, change listener,
 * quota leases, last-used writes, throttles, the meter), so that tests can move time instead of waiting.
 */
export interface Clock {
  now(): Date;
  /** The same time in epoch milliseconds, for the hot path's comparisons (no Date allocated). */
  nowMs(): number;
}

export const systemClock: Clock = { now: () => new Date(), nowMs: () => Date.now() };

/** What every router receives from `createApp`; nothing in the server reaches for globals. */
export interface AppContext {
  database: Database;
  config: AppConfig;
  clock: Clock;
  logger: Logger;
  /** Outgoing mail: the local capture server in local mode, SMTP_URL otherwise. */
  mailer: Mailer;
  /** The key hot path's per-app helpers (verified-key cache, change listener, quota leases, last-used writes). */
  keyServices: KeyServices;
  /** Burst limits and quota spending of calculation routes (server/quota/meter.ts). */
  meter: Meter;
  /** The app's Prometheus registry and counters (server/metrics); absent in apps built without one (test harnesses). */
  metrics?: AppMetrics;
}
