import type { Logger } from 'pino';
import type { Db } from '../db/client.ts';
import { recordKeysLastUsed } from './quota.repository.ts';

/** How often "last used" times reach the database. A crash loses at most this much of them (and nothing else). */
export const LAST_USED_FLUSH_MS = 1_000;

/**
 * Collects when each key was last used in memory and writes all of them with one statement per
 * interval, instead of one UPDATE of api_keys per request. The times come from the app's clock
 * (passed in by the caller), so this recorder reads none itself.
 */
export class LastUsedRecorder {
  private pending = new Map<string, Date>();
  private timer: NodeJS.Timeout | undefined;
  private flushing: Promise<void> | undefined;

  constructor(
    private readonly db: Db,
    private readonly logger: Logger,
  ) {}

  start(): void {
    this.timer ??= setInterval(() => void this.flush(), LAST_USED_FLUSH_MS).unref();
  }

  touch(keyId: string, at: Date): void {
    const before = this.pending.get(keyId);
    if (!before || before.getTime() < at.getTime()) this.pending.set(keyId, at);
  }

  /** Writes what is pending; a failed write keeps it for the next interval. */
  async flush(): Promise<void> {
    while (this.flushing) await this.flushing;
    if (this.pending.size === 0) return;
    const batch = this.pending;
    this.pending = new Map();
    this.flushing = recordKeysLastUsed(this.db, batch)
      .catch((err: unknown) => {
        for (const [keyId, at] of batch) this.touch(keyId, at);
        this.logger.warn({ err, keys: batch.size }, 'could not record when keys were last used; trying again');
      })
      .finally(() => {
        this.flushing = undefined;
      });
    await this.flushing;
  }

  /** Stops the interval and writes what is left (graceful shutdown). */
  async stop(): Promise<void> {
    clearInterval(this.timer);
    this.timer = undefined;
    await this.flush();
  }
}
