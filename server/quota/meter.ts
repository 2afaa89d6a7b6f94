import { createHash } from 'node:crypto';
import type { NextFunction, Request, RequestHandler, Response } from 'express';
import { rateLimit, type RateLimitInfo } from 'express-rate-limit';
import type { AppContext } from '../context.ts';
import { requireCaller, type Caller, type CallerLimits } from '../auth/caller.ts';
import { ApiError } from '../http/problem.ts';
import { SECONDS_PER_DAY, secondsUntilUtcMidnight, utcDay } from './day.ts';
import type { MeterDecision } from './key-leases.ts';
import { PgRateLimitStore } from './pg-rate-limit-store.ts';
import { recordConsoleUsage } from './quota.repository.ts';
import { sendQuotaWarnings } from './warnings.ts';

const BURST_WINDOW_MS = 60_000;
/** Remembered `RateLimit-Policy` fields at most; the memo starts again when full. */
const MAX_KEY_POLICIES = 10_000;

/** What the meter may use of the app; `createApp` builds the meter before the context that holds it. */
export type MeterDependencies = Omit<AppContext, 'meter'>;

type KeyLimits = NonNullable<CallerLimits['key']>;

/** One metered key call, as its RateLimit fields and refusals need it. */
interface KeyCall {
  organisationId: string;
  key: KeyLimits;
  burstKey: string;
  units: number;
  now: Date;
  day: string;
}

/**
 * Burst limits and quota spending of an app's calculation routes. Key calls spend from the key's
 * lease in this process (KeyLeases), so most are decided without a database round trip; console
 * (session) calls share one per-minute limiter (express-rate-limit, store in PostgreSQL) and are
 * recorded as the member's own usage. The caller and its limits come from requireCaller.
 */
export class Meter {
  /** Console calls: every metered endpoint shares a member's per-minute allowance. */
  readonly sessionBurst: RequestHandler;
  /**
   * The `RateLimit-Policy` field of a key (constant while its limits are): worked out once, as a hash
   * and two formatted items per request add up on the hot path. Bounded like any per-key memo.
   */
  private readonly keyPolicies = new Map<string, { burstLimit: number; quota: number; burstItem: string; field: string }>();

  constructor(private readonly ctx: MeterDependencies) {
    this.sessionBurst = rateLimit({
      windowMs: BURST_WINDOW_MS,
      limit: (_req, res) => (res.locals.callerLimits as CallerLimits).burstPerMinute,
      keyGenerator: (_req, res) => {
        const caller = res.locals.caller as Caller;
        return caller.keyId ? `key:${caller.keyId}` : `member:${caller.userId}`;
      },
      identifier: 'burst',
      standardHeaders: 'draft-8',
      legacyHeaders: false,
      store: new PgRateLimitStore(ctx.database.pool, 'burst:'),
      handler: (req, _res, next) => {
        const info = (req as Request & { rateLimit?: RateLimitInfo }).rateLimit;
        const waitS = info?.resetTime ? Math.max(1, Math.ceil((info.resetTime.getTime() - ctx.clock.nowMs()) / 1000)) : 60;
        next(
          new ApiError('tooManyRequests', `More than ${info?.limit ?? '?'} requests in a minute; wait ${waitS} s (Retry-After) or spread the calls out.`, {
            headers: { 'Retry-After': String(waitS) },
          }),
        );
      },
    });
  }

  /** Console calls: the burst limit has passed; the usage row is written, no key quota is spent. */
  async meterSession(endpoint: string, units: number, res: Response): Promise<void> {
    const caller = res.locals.caller as Caller;
    await recordConsoleUsage(this.ctx.database.db, { organisationId: caller.organisationId, userId: caller.userId, endpoint, day: utcDay(this.ctx.clock.now()), units });
    this.ctx.metrics?.quota.spent(endpoint, units);
  }

  /** A console call refused by the per-minute limit (key calls are counted by their lease). */
  countSessionBurstRefusal(endpoint: string, units: number): void {
    this.ctx.metrics?.quota.refused(endpoint, 'burst', units);
  }

  /**
   * Key calls: burst hit and quota units come from the key's lease in this process, and the answer
   * carries the same `"burst"` and `"daily"` RateLimit items as console calls. Returns a promise only
   * when the call had to wait for a lease.
   */
  meterKey(endpoint: string, units: number, res: Response): void | Promise<void> {
    const caller = res.locals.caller as Caller;
    const key = (res.locals.callerLimits as CallerLimits).key!;
    const now = this.ctx.clock.now();
    const day = utcDay(now);
    const burstKey = `key:${key.id}`;
    const decided = this.ctx.keyServices.leases.spend({
      keyId: key.id,
      organisationId: caller.organisationId,
      userId: caller.userId,
      endpoint,
      day,
      units,
      burst: { row: `burst:${burstKey}`, windowMs: BURST_WINDOW_MS },
    });
    const call: KeyCall = { organisationId: caller.organisationId, key, burstKey, units, now, day };
    if (decided instanceof Promise) return decided.then((decision) => this.applyKeyDecision(res, call, decision));
    this.applyKeyDecision(res, call, decided);
  }

  private keyPolicy(burstKey: string, burstLimit: number, quota: number): { burstItem: string; field: string } {
    let policy = this.keyPolicies.get(burstKey);
    if (policy === undefined || policy.burstLimit !== burstLimit || policy.quota !== quota) {
      if (this.keyPolicies.size >= MAX_KEY_POLICIES) this.keyPolicies.clear();
      // express-rate-limit's draft-8 partition key, so key and console answers carry the same header shape.
      const partitionKey = Buffer.from(createHash('sha256').update(burstKey).digest('hex').slice(0, 12)).toString('base64');
      const burstItem = `"burst"; q=${burstLimit}; w=${BURST_WINDOW_MS / 1000}; pk=:${partitionKey}:`;
      policy = { burstLimit, quota, burstItem, field: `${burstItem}, "daily"; q=${quota}; w=${SECONDS_PER_DAY}` };
      this.keyPolicies.set(burstKey, policy);
    }
    return policy;
  }

  private applyKeyDecision(res: Response, call: KeyCall, decision: MeterDecision): void {
    const { key, burstKey, units, now, day } = call;
    const burst = decision.burst;
    const quota = decision.quota;
    // Each field is set once with its items joined (RFC 9651 lists), not appended item by item.
    let limit = '';
    let policy: string | undefined;
    if (burst) {
      const burstResetS = Math.max(0, Math.ceil((burst.resetAtMs - now.getTime()) / 1000));
      limit = `"burst"; r=${Math.max(0, burst.limit - burst.totalHits)}; t=${burstResetS}, `;
      const known = this.keyPolicy(burstKey, burst.limit, quota);
      if (decision.refusedBy === 'burst') {
        res.setHeader('RateLimit', limit.slice(0, -2));
        res.setHeader('RateLimit-Policy', known.burstItem);
        const waitS = Math.max(1, burstResetS);
        throw new ApiError('tooManyRequests', `More than ${burst.limit} requests in a minute; wait ${waitS} s (Retry-After) or spread the calls out.`, {
          headers: { 'Retry-After': String(waitS) },
        });
      }
      policy = known.field;
    }
    const resetS = secondsUntilUtcMidnight(now);
    const remaining = Math.max(0, quota - decision.used);
    res.setHeader('RateLimit', `${limit}"daily"; r=${remaining}; t=${resetS}`);
    res.setHeader('RateLimit-Policy', policy ?? `"daily"; q=${quota}; w=${SECONDS_PER_DAY}`);
    if (!decision.admitted) {
      const need = units > 1 ? ` This request needs ${units} units and ${remaining} remain.` : '';
      throw new ApiError(
        'tooManyRequests',
        `Key ${key.displayStart}… has spent its ${quota} calculation units for ${day} (UTC).${need} ` +
          `The quota starts again at 00:00 UTC, in ${resetS} s; an admin can raise it.`,
        { headers: { 'Retry-After': String(resetS) } },
      );
    }
    if (!(decision.warned80 && decision.warned100)) {
      sendQuotaWarnings(this.ctx, {
        organisationId: call.organisationId,
        key: { ...key, dailyQuota: quota },
        day,
        used: decision.used,
        warned80: decision.warned80,
        warned100: decision.warned100,
      });
    }
  }
}

function unitsOf(units: ((req: Request, res: Response) => number) | undefined, req: Request, res: Response): number {
  if (!units) return 1;
  const n = units(req, res);
  return Number.isFinite(n) && n >= 1 ? Math.floor(n) : 1;
}

/**
 * Admits a calculation or refuses it before any work: first the per-minute burst limit, then the
 * key's daily quota, spent atomically. `units` is how many calculation units the request costs
 * (default 1; a batch passes its item count); a request whose units do not fit is refused whole with 429.
 *
 * Key calls are decided by the key's lease in this process (see KeyLeases): units and burst hits are
 * reserved from the database in blocks, so no process can overspend, and usage rows are flushed in
 * bulk. Console (session) calls go through express-rate-limit (store in PostgreSQL) with the
 * organisation's per-minute burst limit and are recorded as the member's own usage (key null); they
 * spend no key quota.
 *
 * Units are spent when the request is admitted, before the route validates its body: a request that
 * then fails validation has still cost its units (as with any per-request rate limit). Burst refusals
 * spend no daily units.
 */
export function meterCalculation(ctx: AppContext, endpoint: string, units?: (req: Request, res: Response) => number): RequestHandler {
  const meter = ctx.meter;
  const burst = meter.sessionBurst;
  return (req: Request, res: Response, next: NextFunction) => {
    const caller = res.locals.caller;
    if (!caller || !res.locals.callerLimits) {
      next(new Error('meterCalculation must run after requireCaller'));
      return;
    }
    if (caller.kind === 'key' && res.locals.callerLimits.key) {
      let pending: void | Promise<void>;
      try {
        pending = meter.meterKey(endpoint, unitsOf(units, req, res), res);
      } catch (err) {
        next(err);
        return;
      }
      if (pending) pending.then(() => next(), next);
      else next();
      return;
    }
    void burst(req, res, (err?: unknown) => {
      if (err) {
        if (err instanceof ApiError && err.kind === 'tooManyRequests') meter.countSessionBurstRefusal(endpoint, unitsOf(units, req, res));
        next(err);
        return;
      }
      meter.meterSession(endpoint, unitsOf(units, req, res), res).then(() => next(), next);
    });
  };
}

/** `[requireCaller, meterCalculation]` for a calculation route. */
export function calculationGuard(ctx: AppContext, endpoint: string, units?: (req: Request, res: Response) => number): RequestHandler[] {
  return [requireCaller(ctx), meterCalculation(ctx, endpoint, units)];
}
