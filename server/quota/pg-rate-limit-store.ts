import type { ClientRateLimitInfo, Options, Store } from 'express-rate-limit';
import type pg from 'pg';

/**
 * An express-rate-limit store on the app's own pool: one row per limited caller in
 * `rate_limit_hits`, changed by single statements, so every server process sees the same counts.
 * Window times come from the database clock, which all processes share.
 */
export class PgRateLimitStore implements Store {
  readonly prefix: string;
  readonly localKeys = false;
  private windowMs = 60_000;

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
    // An expired window starts again at 1 in the same statement, so no caller can slip between.
    const { rows } = await this.pool.query<{ hits: number; reset_at: Date }>(
      `insert into rate_limit_hits as r (key, hits, reset_at)
       values ($1, 1, now() + make_interval(secs => $2::double precision / 1000))
       on conflict (key) do update set
         hits = case when r.reset_at <= now() then 1 else r.hits + 1 end,
         reset_at = case when r.reset_at <= now() then excluded.reset_at else r.reset_at end
       returning hits, reset_at`,
      [this.prefix + key, this.windowMs],
    );
    const row = rows[0]!;
    return { totalHits: row.hits, resetTime: row.reset_at };
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
  const result = await pool.query("delete from rate_limit_hits where reset_at < now() - interval '1 hour'");
  return result.rowCount ?? 0;
}
