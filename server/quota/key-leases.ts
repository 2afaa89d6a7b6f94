import { randomUUID } from 'node:crypto';
import { sql } from 'drizzle-orm';
import type { Logger } from 'pino';
import type { Clock } from '../context.ts';
import type { Db } from '../db/client.ts';
import { NO_QUOTA_TALLY, type QuotaTally } from '../metrics/app-metrics.ts';
import { utcDay } from './day.ts';
import { countOtherHolders, flushKeyUsage, leaseKeyUnits, returnKeyLease, type BufferedUsage, type LeaseGrant } from './quota.repository.ts';
import { UsageBuffer } from './usage-buffer.ts';

/** A process that cannot cover a request asks the others for their unspent units on this channel… */
export const QUOTA_RECLAIM_CHANNEL = 'gammaline_quota_reclaim';
/** …and they answer on this one once the units are back in the database (drizzle/0005). */
export const QUOTA_RETURNED_CHANNEL = 'gammaline_quota_returned';

/** Buffered usage reaches the database this often; a crash loses at most this much of it. */
export const USAGE_FLUSH_MS = 1_000;
/** Units a key has not touched for this long go back to the database. */
export const IDLE_RETURN_MS = 1_000;
/** Most units (and hits) reserved ahead of need in one lease. */
export const MAX_PREFETCH = 4_096;
/** How long a refusing process waits for other processes to give units back. */
const RECLAIM_WAIT_MS = 250;
/** Leases for a call whose granted hits belonged to a window already over (clocks a little apart), and the pause between the later ones. */
const MAX_WINDOW_RETRIES = 8;
const WINDOW_RETRY_WAIT_MS = 50;
/** Pause of background top-ups after one that got less than half of what it asked for. */
const TOP_UP_QUIET_MS = 1_000;
/** After giving units back on request, a process reserves only what it needs for this long. */
const NEED_ONLY_MS = 10_000;
/** The demand that sizes the next reservation is measured over windows of this length. */
const RATE_WINDOW_MS = 100;
/** Most waiting requests one lease decides; a longer queue is served by the next lease. */
const MAX_GROUP = 2_000;
/** A pool untouched for this long, holding nothing, is forgotten. */
const FORGET_MS = 60_000;

/** One metered call of a key. */
export interface MeteredCall {
  keyId: string;
  organisationId: string;
  userId: string;
  endpoint: string;
  day: string;
  units: number;
  /** The key's per-minute window row; every call of a key counts one hit in it. */
  burst?: { row: string; windowMs: number };
}

/** Whether a call may run, with the figures its RateLimit headers show. */
export interface MeterDecision {
  admitted: boolean;
  /** Why a call was refused: no hit left in the per-minute window, or not enough units today. */
  refusedBy?: 'burst' | 'quota';
  /** The day's units spent by this key, this call included (reservations of other processes count as spent). */
  used: number;
  quota: number;
  warned80: boolean;
  warned100: boolean;
  /** `resetAtMs`: when the window ends on the app's clock. */
  burst?: { totalHits: number; limit: number; resetAtMs: number };
}

interface Waiting {
  call: MeteredCall;
  resolve(decision: MeterDecision): void;
  reject(err: unknown): void;
  /** Other processes were already asked for units on this call's behalf. */
  reclaimed: boolean;
  /** Times leased for again because the per-minute window turned over during a lease. */
  windowRetries?: number;
}

/** What this process holds for one key and day. */
class KeyDayPool {
  /** Reserved in the database and not spent yet. */
  units = 0;
  /** Reserved hits of the per-minute window ending at resetAt. */
  hits = 0;
  /** The window's end as the database wrote it: names the window in returns and tells windows apart. */
  resetAt: Date | undefined;
  /** The same end on the app's clock (the lease's send time plus what the database said was left). */
  resetAtMs = 0;
  burstLimit = 0;
  /** The window's hits in the database after this process's latest lease (reservations included). */
  burstHits = 0;
  /** The day's spent and reserved units after this process's latest lease. */
  used = 0;
  quota = 0;
  warned80 = false;
  warned100 = false;
  /** A lease row of this process exists for the key and day. */
  leased = false;
  /** Units the lease row shows, and when it was last written. */
  reportedUnits = 0;
  reportedAtMs = 0;
  waiting: Waiting[] = [];
  /** A lease or a return is running; only one at a time per pool. */
  running: Promise<void> | undefined;
  /** The running lease is a top-up (no call waits on it), so calls may still spend what the pool holds. */
  toppingUp = false;
  topUpAsked = false;
  /** No top-ups before this time: the last one got less than half of what it asked for (the quota is running out). */
  topUpQuietUntilMs = 0;
  /** The per-minute window the pool's calls count against (from the first call). */
  burst: MeteredCall['burst'];
  giveBackAsked = false;
  /** Resolved when the give-back asked for has run. */
  giveBackWaiters: (() => void)[] = [];
  /** A return sent but not confirmed: its units may already be back in the database, so they are never spent again; it is sent again (the database applies it once) before the next lease. */
  pendingReturn: { units: number; hits: number; resetAt: Date | undefined } | undefined;
  /** Ends a reclaim wait early (this process was asked to give back meanwhile). */
  wakeReclaim: (() => void) | undefined;
  lastUseMs = 0;
  needOnlyUntilMs = 0;
  private windowStartMs = 0;
  private windowUnits = 0;
  private windowHits = 0;
  private lastWindowUnits = 0;
  private lastWindowHits = 0;

  constructor(
    readonly keyId: string,
    readonly day: string,
    readonly burstRow: string | undefined,
  ) {}

  hitsValid(nowMs: number): boolean {
    return this.resetAt !== undefined && this.resetAtMs > nowMs;
  }

  noteUse(units: number, nowMs: number): void {
    if (nowMs - this.windowStartMs >= RATE_WINDOW_MS) {
      const fresh = nowMs - this.windowStartMs < 2 * RATE_WINDOW_MS;
      this.lastWindowUnits = fresh ? this.windowUnits : 0;
      this.lastWindowHits = fresh ? this.windowHits : 0;
      this.windowStartMs = nowMs;
      this.windowUnits = 0;
      this.windowHits = 0;
    }
    this.windowUnits += units;
    this.windowHits += 1;
  }

  /** Reservation ahead of need: about two windows' worth of the recent demand. */
  extra(nowMs: number): { units: number; hits: number } {
    if (nowMs < this.needOnlyUntilMs) return { units: 0, hits: 0 };
    return {
      units: Math.min(MAX_PREFETCH, 2 * Math.max(this.lastWindowUnits, this.windowUnits)),
      hits: Math.min(MAX_PREFETCH, 2 * Math.max(this.lastWindowHits, this.windowHits)),
    };
  }
}

/**
 * Quota leases: the hot path of metering without a database round trip per request.
 *
 * Each process reserves units (and per-minute hits) of a key from PostgreSQL in blocks, with one atomic
 * statement (`gammaline_lease_key`, drizzle/0005), and spends them in memory. The reservation counts
 * in `key_quota_days.used` at once, so however many processes spend, the day's total can never pass
 * the quota: overspend is exactly zero. Block sizes adapt: a lease asks for what waiting requests need
 * plus about two windows of recent demand (at most MAX_PREFETCH), and the database grants the advance
 * part only up to an eighth of what is still free, so reservations shrink to nothing as the quota runs
 * out. Requests that arrive while a lease is running wait and are decided together by the next one;
 * a busy pool that falls below half of its advance target tops itself up in the background meanwhile
 * calls go on spending, so the round trip is rarely on a request's path.
 *
 * Nobody is refused while units sit unused elsewhere: a process that cannot cover a request, while
 * other live processes hold unspent units of the key, asks them on QUOTA_RECLAIM_CHANNEL; they give
 * theirs back and answer on QUOTA_RETURNED_CHANNEL, and the request is decided again (after at most
 * RECLAIM_WAIT_MS). Unspent units also go back when a key stays idle for IDLE_RETURN_MS, when its
 * day ends, when the key changes (a new quota applies at once), and on shutdown.
 *
 * Usage records are added up in memory and written every USAGE_FLUSH_MS in one statement that is
 * applied exactly once (numbered flushes). What a crash (kill -9) costs, with the quota never at
 * risk: the usage records of the last flush interval (the units stay spent), and the process's
 * unspent reservations (at most MAX_PREFETCH per key, and never more than an eighth of what was free
 * when reserved), which stay counted as used until the day ends.
 */
export class KeyLeases {
  readonly instanceId = randomUUID();
  private readonly pools = new Map<string, KeyDayPool>();
  private readonly usage = new UsageBuffer();
  private seq = 0;
  private pendingFlush: { seq: number; usage: BufferedUsage[]; leases: { keyId: string; day: string; units: number }[] } | undefined;
  private flushing: Promise<void> | undefined;
  private timer: NodeJS.Timeout | undefined;
  private readonly reclaimWaits = new Map<string, Set<(from: string) => void>>();

  constructor(
    private readonly db: Db,
    private readonly logger: Logger,
    private readonly clock: Clock,
    private readonly tally: QuotaTally = NO_QUOTA_TALLY,
  ) {}

  start(): void {
    this.timer ??= setInterval(() => void this.tick(), USAGE_FLUSH_MS).unref();
  }

  /**
   * Decides one call: at once (no promise) when this process holds enough, otherwise after a lease.
   * An admitted call's usage is recorded; a refused one spends nothing.
   */
  spend(call: MeteredCall): MeterDecision | Promise<MeterDecision> {
    const pool = this.pool(call);
    const nowMs = this.clock.nowMs();
    pool.lastUseMs = nowMs;
    // While a lease runs, its group was sized on what the pool holds: later calls wait for the next one.
    // A top-up is sized on nobody's need, so calls keep spending during it (unless a give-back was asked:
    // then the units are on their way back, as a changed quota must apply at once).
    if ((!pool.running || (pool.toppingUp && !pool.giveBackAsked)) && pool.waiting.length === 0) {
      const decided = this.admit(pool, call, nowMs);
      if (decided) {
        this.topUpWhenLow(pool, nowMs);
        return decided;
      }
    }
    return new Promise<MeterDecision>((resolve, reject) => {
      pool.waiting.push({ call, resolve, reject, reclaimed: false });
      if (!pool.running) this.run(pool);
    });
  }

  /**
   * Reserves the next block before this one runs out: when a busy pool falls below half of its advance
   * target, a lease for the difference runs in the background, so calls rarely wait for a round trip.
   */
  private topUpWhenLow(pool: KeyDayPool, nowMs: number): void {
    if (pool.running || pool.topUpAsked || nowMs < pool.topUpQuietUntilMs) return;
    const target = pool.extra(nowMs);
    const lowUnits = pool.units * 2 < target.units;
    const lowHits = pool.burst !== undefined && pool.hits * 2 < target.hits;
    if (!lowUnits && !lowHits) return;
    pool.topUpAsked = true;
    this.run(pool);
  }

  /** Units this process holds unspent for a key and day (they count as used in the database). */
  unspent(keyId: string, day: string): number {
    return this.pools.get(`${keyId}/${day}`)?.units ?? 0;
  }

  /** Gives a key's unspent units back now (a quota change, or a caller that needs them elsewhere). */
  async giveBackKey(keyId: string): Promise<void> {
    await Promise.all([...this.pools.values()].filter((p) => p.keyId === keyId).map((p) => this.askGiveBack(p)));
  }

  /** Gives every unspent unit back (the change listener reconnected: announcements may have been missed). */
  async giveBackAll(): Promise<void> {
    await Promise.all([...this.pools.values()].map((p) => this.askGiveBack(p)));
  }

  /** Asks other processes holding units of the key and day to give them back, and waits for them (NDJSON blocks). */
  async reclaimFromOthers(keyId: string, day: string): Promise<void> {
    const holders = await countOtherHolders(this.db, { instanceId: this.instanceId, keyId, day });
    if (holders > 0) await this.reclaim(keyId, day, holders, undefined);
  }

  /** A notification on one of the quota channels (delivered by the key-change listener). */
  notified(channel: string, payload: string): void {
    const [keyId, day, from] = payload.split('/');
    if (!keyId || !day || !from || from === this.instanceId) return;
    if (channel === QUOTA_RECLAIM_CHANNEL) {
      this.tally.reclaim('received');
      const pool = this.pools.get(`${keyId}/${day}`);
      if (!pool) return;
      pool.needOnlyUntilMs = this.clock.nowMs() + NEED_ONLY_MS;
      void this.askGiveBack(pool);
      // Waiting for others' units while holding some of our own would leave both sides waiting.
      pool.wakeReclaim?.();
    } else if (channel === QUOTA_RETURNED_CHANNEL) {
      for (const heard of this.reclaimWaits.get(`${keyId}/${day}`) ?? []) heard(from);
    }
  }

  /** Writes buffered usage now (tests and shutdown; the interval does it otherwise). */
  async flush(): Promise<void> {
    while (this.flushing) await this.flushing;
    this.flushing = this.flushOnce().finally(() => {
      this.flushing = undefined;
    });
    await this.flushing;
  }

  /**
   * Gives every unspent unit back and writes the buffered usage now, so that the database shows
   * exactly what was spent (tests, the usage report after a load, shutdown).
   */
  async settle(): Promise<void> {
    await Promise.all([...this.pools.values()].map((p) => this.askGiveBack(p)));
    await this.flush();
    // A flush that was retrying leaves the newer usage for a second one.
    if (this.usage.size > 0) await this.flush();
  }

  /** Stops the interval and settles (graceful shutdown). */
  async stop(): Promise<void> {
    clearInterval(this.timer);
    this.timer = undefined;
    await this.settle();
  }

  private pool(call: MeteredCall): KeyDayPool {
    const id = `${call.keyId}/${call.day}`;
    let pool = this.pools.get(id);
    if (!pool) {
      pool = new KeyDayPool(call.keyId, call.day, call.burst?.row);
      pool.burst = call.burst;
      this.pools.set(id, pool);
    }
    return pool;
  }

  /** Spends from what the pool holds, or returns undefined when it cannot cover the call. */
  private admit(pool: KeyDayPool, call: MeteredCall, nowMs: number): MeterDecision | undefined {
    const needsHit = call.burst !== undefined;
    if (needsHit && !(pool.hits >= 1 && pool.hitsValid(nowMs))) return undefined;
    if (pool.units < call.units) return undefined;
    pool.units -= call.units;
    if (needsHit) pool.hits -= 1;
    pool.noteUse(call.units, nowMs);
    this.usage.add({ organisationId: call.organisationId, userId: call.userId, keyId: call.keyId, endpoint: call.endpoint, day: call.day, units: call.units });
    this.tally.spent(call.endpoint, call.units);
    const decided = this.decision(pool, true);
    // The call that crosses a threshold claims its warning; later ones need not try again.
    if (decided.used * 100 >= decided.quota * 80) pool.warned80 = true;
    if (decided.used >= decided.quota) pool.warned100 = true;
    return decided;
  }

  private decision(pool: KeyDayPool, admitted: boolean, refusedBy?: 'burst' | 'quota'): MeterDecision {
    return {
      admitted,
      refusedBy,
      used: pool.used - pool.units,
      quota: pool.quota,
      warned80: pool.warned80,
      warned100: pool.warned100,
      burst: pool.resetAt && { totalHits: pool.burstHits - pool.hits, limit: pool.burstLimit, resetAtMs: pool.resetAtMs },
    };
  }

  private run(pool: KeyDayPool): void {
    pool.running = this.work(pool)
      .catch((err: unknown) => {
        // Not expected (each step handles its own failures); never leave a caller hanging.
        this.logger.error({ err, keyId: pool.keyId }, 'quota lease failed');
        for (const w of pool.waiting.splice(0)) w.reject(err);
      })
      .finally(() => {
        pool.running = undefined;
        // Calls that arrived in between start the next round.
        if (pool.waiting.length > 0 || pool.giveBackAsked || pool.topUpAsked) this.run(pool);
      });
  }

  private async work(pool: KeyDayPool): Promise<void> {
    for (;;) {
      // A give-back goes first: a quota change or another process's reclaim must not wait for a busy key.
      if (pool.giveBackAsked) {
        pool.giveBackAsked = false;
        const waiters = pool.giveBackWaiters.splice(0);
        await this.giveBack(pool);
        for (const done of waiters) done();
      } else if (pool.waiting.length > 0) {
        const group = pool.waiting.splice(0, MAX_GROUP);
        // Whatever goes wrong, no caller of the group is left waiting (a settled one ignores the reject).
        await this.decide(pool, group).catch((err: unknown) => {
          for (const w of group) w.reject(err);
        });
      } else if (pool.topUpAsked) {
        pool.topUpAsked = false;
        pool.toppingUp = true;
        try {
          await this.topUp(pool);
        } catch (err) {
          // Nothing waits on a top-up: the next call that finds the pool short leases for itself.
          this.logger.warn({ err, keyId: pool.keyId }, 'could not reserve quota units ahead');
        } finally {
          pool.toppingUp = false;
        }
      } else {
        return;
      }
    }
  }

  /** Decides a group of waiting calls: from what the pool holds, else after one lease. */
  private async decide(pool: KeyDayPool, group: Waiting[]): Promise<void> {
    const nowMs = this.clock.nowMs();
    if (!pool.hitsValid(nowMs)) pool.hits = 0; // a past window's hits are void
    // In arrival order, what the pool already covers needs no round trip.
    let first = 0;
    for (; first < group.length; first++) {
      const decided = this.admit(pool, group[first]!.call, nowMs);
      if (!decided) break;
      group[first]!.resolve(decided);
    }
    const short = group.slice(first);
    if (short.length === 0) return;
    if (pool.pendingReturn) await this.sendPendingReturn(pool);
    let units = 0;
    let hits = 0;
    for (const w of short) {
      units += w.call.units;
      if (w.call.burst) hits += 1;
    }
    const extra = pool.extra(nowMs);
    // Leasing again for hits of a window that was over: only what the calls need, so that the last
    // moments of a window the database still counts are not reserved ahead for nobody.
    const retryingWindow = short.some((w) => (w.windowRetries ?? 0) > 0);
    const windowBefore = pool.resetAt?.getTime();
    const askedMs = this.clock.nowMs();
    const grant = await leaseKeyUnits(this.db, {
      instanceId: this.instanceId,
      keyId: pool.keyId,
      day: pool.day,
      needUnits: Math.max(0, units - pool.units),
      needHits: Math.max(0, hits - pool.hits),
      // Topped up to the advance target, never beyond: what is left over after the group counts.
      extraUnits: Math.max(0, extra.units - Math.max(0, pool.units - units)),
      extraHits: retryingWindow ? 0 : Math.max(0, extra.hits - Math.max(0, pool.hits - hits)),
      unspent: pool.units,
      burst: short[0]!.call.burst,
    });
    this.tally.leased(grant.units);
    const windowChanged = this.takeGrant(pool, grant, windowBefore, askedMs);
    const refused: Waiting[] = [];
    for (const w of short) {
      const decided = this.admit(pool, w.call, this.clock.nowMs());
      if (decided) w.resolve(decided);
      else refused.push(w);
    }
    if (refused.length === 0) return;
    const nowAfter = this.clock.nowMs();
    const noHit = (w: Waiting) => w.call.burst !== undefined && !(pool.hits >= 1 && pool.hitsValid(nowAfter));
    const again: Waiting[] = [];
    const final: Waiting[] = [];
    const askOthers = grant.holders > 0 && refused.some((w) => !w.reclaimed);
    // The database reads its clock when the lease starts: a lease just before the minute turns can grant
    // hits of a window that is over by the time the answer arrives. Those hits are void, not a refusal.
    const grantedWindowOver = grant.burst !== undefined && askedMs + grant.burst.resetInMs <= nowAfter;
    let waitForWindow = false;
    for (const w of refused) {
      if (askOthers && !w.reclaimed) {
        w.reclaimed = true;
        again.push(w);
      } else if ((windowChanged || grantedWindowOver) && noHit(w) && (w.windowRetries ?? 0) < MAX_WINDOW_RETRIES) {
        w.windowRetries = (w.windowRetries ?? 0) + 1;
        waitForWindow ||= grantedWindowOver && w.windowRetries > 1;
        again.push(w);
      } else {
        final.push(w);
      }
    }
    for (const w of final) {
      const reason = noHit(w) ? 'burst' : 'quota';
      this.tally.refused(w.call.endpoint, reason, w.call.units);
      w.resolve(this.decision(pool, false, reason));
    }
    // Units that could not cover a refused call are not kept for nobody: they go back (and to other processes).
    if (final.some((w) => !noHit(w)) && pool.units > 0) pool.giveBackAsked = true;
    if (again.length === 0) return;
    if (askOthers) await this.reclaim(pool.keyId, pool.day, grant.holders, pool);
    // Still the old window on a second try: the database's clock is behind ours; give it a moment.
    if (waitForWindow) await new Promise((resolve) => setTimeout(resolve, WINDOW_RETRY_WAIT_MS));
    pool.waiting.unshift(...again);
  }

  /** Adds a lease's grant (asked at `askedMs`) to the pool; true when it started a new per-minute window. */
  private takeGrant(pool: KeyDayPool, grant: LeaseGrant, windowBefore: number | undefined, askedMs: number): boolean {
    pool.units += grant.units;
    pool.leased = true;
    // The lease wrote the row from the units held when it started; calls may have spent some since (a
    // top-up), and a flush under way may overwrite the row: the next flush writes it again regardless.
    pool.reportedUnits = -1;
    pool.reportedAtMs = this.clock.nowMs();
    pool.used = grant.used;
    pool.quota = grant.quota;
    pool.warned80 = grant.warned80;
    pool.warned100 = grant.warned100;
    if (!grant.burst) return false;
    const windowChanged = windowBefore !== grant.burst.resetAt.getTime();
    if (windowChanged) pool.hits = 0;
    pool.hits += grant.hits;
    pool.resetAt = grant.burst.resetAt;
    pool.resetAtMs = askedMs + grant.burst.resetInMs;
    pool.burstLimit = grant.burst.limit;
    pool.burstHits = grant.burst.hits;
    return windowChanged;
  }

  /** A lease for the advance target alone, while calls go on spending what the pool holds. */
  private async topUp(pool: KeyDayPool): Promise<void> {
    const nowMs = this.clock.nowMs();
    if (!pool.hitsValid(nowMs)) pool.hits = 0;
    const target = pool.extra(nowMs);
    const extraUnits = Math.max(0, target.units - pool.units);
    const extraHits = pool.burst ? Math.max(0, target.hits - pool.hits) : 0;
    if (extraUnits === 0 && extraHits === 0) return;
    if (pool.pendingReturn) await this.sendPendingReturn(pool);
    const windowBefore = pool.resetAt?.getTime();
    const askedMs = this.clock.nowMs();
    const grant = await leaseKeyUnits(this.db, {
      instanceId: this.instanceId,
      keyId: pool.keyId,
      day: pool.day,
      needUnits: 0,
      needHits: 0,
      extraUnits,
      extraHits,
      unspent: pool.units,
      burst: pool.burst,
    });
    this.tally.leased(grant.units);
    this.takeGrant(pool, grant, windowBefore, askedMs);
    // The database grants at most an eighth of what is free: near the end of a quota, asking again on
    // every call would only lock the key's row for nothing.
    if (grant.units * 2 < extraUnits) pool.topUpQuietUntilMs = this.clock.nowMs() + TOP_UP_QUIET_MS;
  }

  /** Asks the other processes holding units of this key and day to give them back, and waits for them. */
  private async reclaim(keyId: string, day: string, holders: number, pool: KeyDayPool | undefined): Promise<void> {
    const id = `${keyId}/${day}`;
    const answered = new Set<string>();
    let heard!: (from: string) => void;
    let timer: NodeJS.Timeout | undefined;
    const done = new Promise<void>((resolve) => {
      timer = setTimeout(resolve, RECLAIM_WAIT_MS);
      heard = (from) => {
        answered.add(from);
        if (answered.size >= holders) resolve();
      };
      if (pool) pool.wakeReclaim = resolve;
    });
    let waits = this.reclaimWaits.get(id);
    if (!waits) {
      waits = new Set();
      this.reclaimWaits.set(id, waits);
    }
    waits.add(heard);
    try {
      this.tally.reclaim('sent');
      await this.db.execute(sql`select pg_notify(${QUOTA_RECLAIM_CHANNEL}, ${`${id}/${this.instanceId}`})`);
      await done;
    } catch (err) {
      this.logger.warn({ err, keyId }, 'could not ask other processes for unspent quota units');
    } finally {
      clearTimeout(timer);
      if (pool) pool.wakeReclaim = undefined;
      waits.delete(heard);
      if (waits.size === 0) this.reclaimWaits.delete(id);
    }
  }

  /** Gives the pool's units back as soon as the pool is free (before any further lease); resolves when done. */
  private askGiveBack(pool: KeyDayPool): Promise<void> {
    return new Promise<void>((resolve) => {
      pool.giveBackAsked = true;
      pool.giveBackWaiters.push(resolve);
      if (!pool.running) this.run(pool);
    });
  }

  private async giveBack(pool: KeyDayPool): Promise<void> {
    if (!pool.pendingReturn) {
      const units = pool.units;
      const hits = pool.hitsValid(this.clock.nowMs()) ? pool.hits : 0;
      if (units === 0 && hits === 0 && !pool.leased) return;
      pool.units = 0;
      pool.hits = 0;
      pool.pendingReturn = { units, hits, resetAt: pool.resetAt };
    }
    try {
      await this.sendPendingReturn(pool);
    } catch (err) {
      // Maybe applied, maybe not: the same return goes again before the next lease, and at the next tick.
      this.logger.warn({ err, keyId: pool.keyId, units: pool.pendingReturn?.units }, 'could not give unspent quota units back; trying again');
    }
  }

  /** Sends the pending return; the database applies it only while this process's lease row exists, so once. */
  private async sendPendingReturn(pool: KeyDayPool): Promise<void> {
    const r = pool.pendingReturn!;
    await returnKeyLease(this.db, { instanceId: this.instanceId, keyId: pool.keyId, day: pool.day, units: r.units, burstRow: pool.burstRow, hits: r.hits, resetAt: r.resetAt });
    this.tally.gaveBack(r.units);
    pool.pendingReturn = undefined;
    pool.leased = false;
    pool.reportedUnits = 0;
  }

  private async tick(): Promise<void> {
    const nowMs = this.clock.nowMs();
    const today = utcDay(new Date(nowMs));
    for (const [id, pool] of this.pools) {
      if (pool.running || pool.waiting.length > 0) continue;
      const idleMs = nowMs - pool.lastUseMs;
      const holding = pool.units > 0 || (pool.hits > 0 && pool.hitsValid(nowMs));
      if (pool.pendingReturn || (holding && (idleMs >= IDLE_RETURN_MS || pool.day !== today))) void this.askGiveBack(pool);
      else if (!holding && !pool.leased && idleMs >= FORGET_MS) this.pools.delete(id);
    }
    await this.flush().catch(() => {});
  }

  /** One flush: the one that failed last time first (same number), else what has been collected. */
  private async flushOnce(): Promise<void> {
    if (!this.pendingFlush) {
      const nowMs = this.clock.nowMs();
      const leases: { keyId: string; day: string; units: number }[] = [];
      for (const pool of this.pools.values()) {
        if (!pool.leased) continue;
        // Rows must show units that were spent meanwhile, and stay fresh while they hold some.
        if (pool.units !== pool.reportedUnits || (pool.units > 0 && nowMs - pool.reportedAtMs >= 2 * USAGE_FLUSH_MS)) {
          leases.push({ keyId: pool.keyId, day: pool.day, units: pool.units });
          pool.reportedUnits = pool.units;
          pool.reportedAtMs = nowMs;
        }
      }
      // One order for every process, so concurrent flushes lock rows in the same order (no deadlocks).
      const usage = this.usage.drain().sort((a, b) => compare(a.keyId, b.keyId) || compare(a.endpoint, b.endpoint) || compare(a.day, b.day));
      leases.sort((a, b) => compare(a.keyId, b.keyId) || compare(a.day, b.day));
      if (usage.length === 0 && leases.length === 0) return;
      this.pendingFlush = { seq: ++this.seq, usage, leases };
    }
    const flush = this.pendingFlush;
    try {
      await flushKeyUsage(this.db, { instanceId: this.instanceId, ...flush });
      this.pendingFlush = undefined;
    } catch (err) {
      this.logger.warn({ err, rows: flush.usage.length }, 'could not write usage records; keeping them for the next flush');
    }
  }
}

const compare = (a: string, b: string): number => (a < b ? -1 : a > b ? 1 : 0);
