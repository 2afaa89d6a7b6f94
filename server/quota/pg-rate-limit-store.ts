import type { ClientRateLimitInfo, Options, Store } from 'express-rate-limit';
import { withoutStatementTimeout } from '../db/client.ts';
import type pg from 'pg';

/**
 * An express-rate-limit store on the app's own pool: one row per limited caller in
 * `rate_limit_hits`, changed by single statements, so every server process sees the same counts.
 * Window times come from the database clock, which all processes share. Increments of one caller
 * are coalesced while a statement for it is in flight, so a busy caller costs one statement per round
 * trip, not one per request.
 */
export class PgRateLimitStore implements Store {
  readonly prefix: string;
  readonly localKeys = false;
  private windowMs = 60_000;
  private readonly waiting = new Map<string, { resolve(info: ClientRateLimitInfo): void; reject(err: unknown): void }[]>();
  private readonly running = new Set<string>();

  constructor(
    private readonly pool: pg.Pool,
    prefix: string,
  ) {
    this.prefix = prefix;
  }

  init(options: Options): void {
    this.windowMs = options.windowMs;
  }

  async get(key: string): Promise<ClientRateLimitInfo | undefined> {
    const { rows } = await this.pool.query<{ hits: number; reset_at: Date }>(
      'select hits, reset_at from rate_limit_hits where key = $1 and reset_at > now()',
      [this.prefix + key],
    );
    const row = rows[0];
    return row ? { totalHits: row.hits, resetTime: row.reset_at } : undefined;
  }

  async increment(key: string): Promise<ClientRateLimitInfo> {
    const id = this.prefix + key;
    return new Promise<ClientRateLimitInfo>((resolve, reject) => {
      let queue = this.waiting.get(id);
      if (!queue) {
        queue = [];
        this.waiting.set(id, queue);
      }
      queue.push({ resolve, reject });
      if (!this.running.has(id)) void this.run(id);
    });
  }

  /**
   * Hits of one caller that arrive while its statement runs are added together by the next statement;
   * the n-th of them gets the count it would have got alone (total − n_waiting + n), so limits stay exact.
   */
  private async run(id: string): Promise<void> {
    this.running.add(id);
    try {
      for (;;) {
        const group = this.waiting.get(id);
        if (!group || group.length === 0) break;
        this.waiting.delete(id);
        try {
          const { hits, resetAt } = await this.add(id, group.length);
          group.forEach((w, i) => w.resolve({ totalHits: hits - group.length + i + 1, resetTime: resetAt }));
        } catch (err) {
          for (const w of group) w.reject(err);
        }
      }
    } finally {
      this.running.delete(id);
    }
  }

  private async add(id: string, n: number): Promise<{ hits: number; resetAt: Date }> {
    // An expired window starts again at n in the same statement, so no caller can slip between.
    const { rows } = await this.pool.query<{ hits: number; reset_at: Date }>(
      `insert into rate_limit_hits as r (key, hits, reset_at)
       values ($1, $3, now() + make_interval(secs => $2::double precision / 1000))
       on conflict (key) do update set
         hits = case when r.reset_at <= now() then excluded.hits else r.hits + excluded.hits end,
         reset_at = case when r.reset_at <= now() then excluded.reset_at else r.reset_at end
       returning hits, reset_at`,
      [id, this.windowMs, n],
    );
    const row = rows[0]!;
    return { hits: row.hits, resetAt: row.reset_at };
  }

  async decrement(key: string): Promise<void> {
    await this.pool.query('update rate_limit_hits set hits = greatest(hits - 1, 0) where key = $1 and reset_at > now()', [this.prefix + key]);
  }

  async resetKey(key: string): Promise<void> {
    await this.pool.query('delete from rate_limit_hits where key = $1', [this.prefix + key]);
  }
}

/**
 * Deletes windows that ended more than an hour ago. Rows are keyed by whatever callers send
 * (addresses typed at sign-in, client addresses), so without pruning the table would only grow.
 */
export async function pruneRateLimitHits(pool: pg.Pool): Promise<number> {
  // A backlog (after a flood of sign-in attempts) may take longer to delete than a request may run.
  const result = await withoutStatementTimeout(pool, (client) => client.query("delete from rate_limit_hits where reset_at < now() - interval '1 hour'"));
  return result.rowCount ?? 0;
}
