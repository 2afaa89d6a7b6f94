import { and, eq, gt, isNull, or, sql } from 'drizzle-orm';
import type { Clock } from '../context.ts';
import type { Db } from '../db/client.ts';
import { apiKeys, users } from '../db/schema.ts';
import { KEY_CACHE_TTL_MS, type VerifiedKeyCache } from './key-cache.ts';

/**
 * The browser origins that at least one usable key allows, for answering preflights: browsers send
 * them without a key, so the origin is all there is to judge. Held per process, like the verified-key
 * cache, and trusted under the same rules: while the key-change listener is healthy and no change was
 * announced since the read (every announcement moves the cache's generation), for at most the cache's
 * lifetime. Otherwise the next preflight reads the list again; concurrent preflights share that read.
 */
export class BrowserOrigins {
  private origins: ReadonlySet<string> = new Set();
  private readAtMs = Number.NEGATIVE_INFINITY;
  private readAtGeneration = -1;
  private reading: Promise<ReadonlySet<string>> | undefined;

  constructor(
    private readonly db: Db,
    private readonly keys: { cache: VerifiedKeyCache; cacheUsable(): boolean },
    private readonly clock: Clock,
  ) {}

  /** Whether some key allows `origin`: at once while the list is fresh, else after reading it again. */
  allows(origin: string): boolean | Promise<boolean> {
    if (this.fresh()) return this.origins.has(origin);
    return this.read().then((origins) => origins.has(origin));
  }

  private fresh(): boolean {
    return (
      this.keys.cacheUsable() &&
      this.readAtGeneration === this.keys.cache.generation &&
      this.clock.nowMs() - this.readAtMs <= KEY_CACHE_TTL_MS
    );
  }

  private read(): Promise<ReadonlySet<string>> {
    this.reading ??= this.load().finally(() => {
      this.reading = undefined;
    });
    return this.reading;
  }

  private async load(): Promise<ReadonlySet<string>> {
    // Read under the generation it started with: a change announced meanwhile makes the next preflight read again.
    const generation = this.keys.cache.generation;
    const startedMs = this.clock.nowMs();
    const now = this.clock.now();
    const rows = await this.db
      .selectDistinct({ origin: sql<string>`unnest(${apiKeys.allowedOrigins})` })
      .from(apiKeys)
      .innerJoin(users, eq(users.id, apiKeys.userId))
      .where(
        and(
          isNull(apiKeys.revokedAt),
          or(isNull(apiKeys.expiresAt), gt(apiKeys.expiresAt, now)),
          eq(users.disabled, false),
          eq(users.organisationId, apiKeys.organisationId),
          sql`cardinality(${apiKeys.allowedOrigins}) > 0`,
        ),
      );
    this.origins = new Set(rows.map((row) => row.origin));
    this.readAtMs = startedMs;
    this.readAtGeneration = generation;
    return this.origins;
  }
}
