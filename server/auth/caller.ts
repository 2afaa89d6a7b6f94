import { createHash } from 'node:crypto';
import type { NextFunction, Request, RequestHandler, Response } from 'express';
import { rateLimit, type RateLimitInfo } from 'express-rate-limit';
import { eq } from 'drizzle-orm';
import type { AppContext } from '../context.ts';
import { organisations, users } from '../db/schema.ts';
import { ApiError } from '../http/problem.ts';
import { SECONDS_PER_DAY, secondsUntilUtcMidnight, utcDay } from '../quota/day.ts';
import { PgRateLimitStore } from '../quota/pg-rate-limit-store.ts';
import { recordConsoleUsage } from '../quota/quota.repository.ts';
import { sendQuotaWarnings } from '../quota/warnings.ts';
import type { MeterDecision } from '../quota/key-leases.ts';
import { hashApiKey, looksLikeApiKey } from './api-key.ts';
import { keyServicesFor, type KeyServices } from './key-services.ts';
import { csrfSatisfied } from './session.ts';
import { verifyApiKeyHash, type KeyVerification, type VerifiedKey } from './verify-key.ts';

/** Who is calling: a key (integrations) or a signed-in console session. */
export type Caller = {
  kind: 'key' | 'session';
  userId: string;
  organisationId: string;
  role: 'admin' | 'developer';
  keyId?: string;
};

/** What the meter needs about the caller, loaded with it so the meter does not look it up again. */
interface CallerLimits {
  burstPerMinute: number;
  key?: { id: string; name: string; displayStart: string; dailyQuota: number; ownerEmail: string };
}

declare global {
  namespace Express {
    interface Locals {
      caller?: Caller;
      callerLimits?: CallerLimits;
    }
  }
}

const UNAUTHENTICATED_DETAIL =
  'Send a valid API key as `Authorization: Bearer <key>`, or sign in to the console (POST /api/v1/session). ' +
  'Keys are issued under /api/v1/keys or with `npm run keys -- create`.';

/** `Authorization: Bearer <key>` (RFC 6750 §2.1), the key captured. */
const BEARER_KEY = /^Bearer[ ]+(\S+)\s*$/i;

/** One answer for missing, malformed, unknown, revoked, expired keys and disabled owners (RFC 6750 §3). */
function unauthenticated(): ApiError {
  return new ApiError('unauthenticated', UNAUTHENTICATED_DETAIL, { headers: { 'WWW-Authenticate': 'Bearer realm="gammaline"' } });
}

/**
 * Verifies a presented key: a valid verification is reused from the process cache while the
 * key-change listener is connected (changes are announced through NOTIFY and drop the entry at once);
 * otherwise, and for every refused key, one indexed lookup in the database.
 */
async function verifyKey(ctx: AppContext, presented: string, now: Date): Promise<KeyVerification> {
  if (!looksLikeApiKey(presented)) return { outcome: 'malformed' };
  const services = keyServicesFor(ctx.database, ctx.logger);
  const hash = hashApiKey(presented);
  const usable = services.cacheUsable();
  if (usable) {
    const cached = services.cache.get(hash, now);
    if (cached) return { outcome: 'valid', key: cached };
  }
  if (!usable) return verifyApiKeyHash(ctx.database.db, hash, now);
  const verified = await verifyShared(ctx, services, hash, now);
  // A shared lookup was judged at its first caller's time; a key that expired since is expired for this one.
  if (verified.outcome === 'valid' && verified.key.expiresAt && verified.key.expiresAt <= now) return { outcome: 'expired' };
  return verified;
}

/**
 * A database verification shared by concurrent requests with the same key, its valid outcome cached
 * under the generation it started with (a change announced meanwhile discards it), an invalid one
 * dropping any cached entry.
 */
function verifyShared(ctx: AppContext, services: KeyServices, hash: string, now: Date): Promise<KeyVerification> {
  return services.cache.shared(hash, async () => {
    const generation = services.cache.generation;
    const verified = await verifyApiKeyHash(ctx.database.db, hash, now);
    if (verified.outcome === 'valid') {
      if (services.cacheUsable()) services.cache.put(hash, verified.key, generation);
    } else {
      services.cache.drop(hash);
    }
    return verified;
  });
}

async function callerFromKey(ctx: AppContext, req: Request, res: Response, header: string): Promise<Caller> {
  const match = BEARER_KEY.exec(header);
  if (!match?.[1]) throw unauthenticated();
  const now = ctx.clock.now();
  const verified = await verifyKey(ctx, match[1], now);
  if (verified.outcome !== 'valid') {
    // The outcome is for operators' logs only; the caller always gets the same 401.
    req.log?.info({ keyOutcome: verified.outcome }, 'key refused');
    throw unauthenticated();
  }
  const k = verified.key;
  keyServicesFor(ctx.database, ctx.logger).lastUsed.touch(k.keyId, now);
  return callerFromVerifiedKey(res, k);
}

async function callerFromSession(ctx: AppContext, req: Request, res: Response): Promise<Caller | undefined> {
  const userId = req.session?.userId;
  if (!userId) return undefined;
  const rows = await ctx.database.db
    .select({
      id: users.id,
      organisationId: users.organisationId,
      role: users.role,
      disabled: users.disabled,
      burstPerMinute: organisations.defaultBurstPerMinute,
    })
    .from(users)
    .innerJoin(organisations, eq(organisations.id, users.organisationId))
    .where(eq(users.id, userId));
  const member = rows[0];
  if (!member || member.disabled) {
    // A disabled or removed member loses the session at once, not when the cookie expires.
    await new Promise<void>((resolve) => req.session.destroy(() => resolve()));
    return undefined;
  }
  if (!csrfSatisfied(req)) {
    throw new ApiError('forbidden', 'Console writes need the X-CSRF-Token header with the csrfToken from GET /api/v1/session (or the sign-in answer).');
  }
  res.locals.callerLimits = { burstPerMinute: member.burstPerMinute };
  return { kind: 'session', userId: member.id, organisationId: member.organisationId, role: member.role };
}

/**
 * Resolves `Authorization: Bearer <key>` or the console session into `res.locals.caller`.
 * A Bearer header wins over a cookie and needs no CSRF token (browsers never add it on their own).
 */
export function requireCaller(ctx: AppContext): RequestHandler {
  return (req, res, next) => {
    const header = req.headers.authorization;
    // A key verified moments ago is taken from the cache without a promise: the hot path of integrations.
    const cached = header !== undefined ? cachedCaller(ctx, res, header) : undefined;
    if (cached) {
      res.locals.caller = cached;
      next();
      return;
    }
    (header !== undefined ? callerFromKey(ctx, req, res, header) : callerFromSession(ctx, req, res)).then((caller) => {
      if (!caller) throw unauthenticated();
      res.locals.caller = caller;
      next();
    }, next).catch(next);
  };
}

/** The caller of a Bearer key found in the verified-key cache, or undefined (then the full check runs). */
function cachedCaller(ctx: AppContext, res: Response, header: string): Caller | undefined {
  const match = BEARER_KEY.exec(header);
  const presented = match?.[1];
  if (!presented || !looksLikeApiKey(presented)) return undefined;
  const services = keyServicesFor(ctx.database, ctx.logger);
  if (!services.cacheUsable()) return undefined;
  const now = ctx.clock.now();
  const hash = hashApiKey(presented);
  const k = services.cache.get(hash, now);
  if (!k) return undefined;
  if (services.cache.isAging(hash)) {
    verifyShared(ctx, services, hash, now).catch((err: unknown) => ctx.logger.warn({ err }, 'could not verify a cached key again ahead of its expiry'));
  }
  services.lastUsed.touch(k.keyId, now);
  return callerFromVerifiedKey(res, k);
}

/**
 * The caller and limits of a verified key, made once per verification: the key cache hands out the
 * same record until the key changes, so the hot path allocates nothing here. Both are frozen, as every
 * request of that key shares them.
 */
const callersOfKeys = new WeakMap<VerifiedKey, { caller: Caller; limits: CallerLimits }>();

function callerFromVerifiedKey(res: Response, k: VerifiedKey): Caller {
  let made = callersOfKeys.get(k);
  if (!made) {
    made = {
      caller: Object.freeze({ kind: 'key', userId: k.userId, organisationId: k.organisationId, role: k.role, keyId: k.keyId }),
      limits: Object.freeze({
        burstPerMinute: k.burstPerMinute,
        key: Object.freeze({ id: k.keyId, name: k.name, displayStart: k.displayStart, dailyQuota: k.dailyQuota, ownerEmail: k.ownerEmail }),
      }),
    };
    callersOfKeys.set(k, made);
  }
  res.locals.callerLimits = made.limits;
  return made.caller;
}

/**
 * Console-only routes (managing keys, members, invitations): a key cannot mint more keys or
 * change roles, so a leaked key stays a calculation key.
 */
export function requireSession(ctx: AppContext): RequestHandler {
  return async (req, res, next) => {
    if (req.get('authorization') !== undefined) {
      throw new ApiError('forbidden', 'This route is for the console: sign in with POST /api/v1/session and send the session cookie instead of a key.');
    }
    const caller = await callerFromSession(ctx, req, res);
    if (!caller) throw new ApiError('unauthenticated', 'Sign in first: POST /api/v1/session with your e-mail and password.');
    res.locals.caller = caller;
    next();
  };
}

/** Admin-only routes; runs after requireCaller/requireSession. */
export const requireAdmin: RequestHandler = (_req, res, next) => {
  if (res.locals.caller?.role !== 'admin') throw new ApiError('forbidden', 'Only admins of the organisation can do this; ask one of them.');
  next();
};

/** The caller set by requireCaller/requireSession; a programming error if a route forgot them. */
export function callerOf(res: Response): Caller {
  const caller = res.locals.caller;
  if (!caller) throw new Error('route is missing requireCaller/requireSession');
  return caller;
}

const BURST_WINDOW_MS = 60_000;

/**
 * One burst limiter per app for console calls: every metered endpoint shares a member's per-minute
 * allowance. Key calls count their burst hits in the group-commit statement instead (meterKey).
 */
const burstLimiters = new WeakMap<AppContext, RequestHandler>();

function burstLimiter(ctx: AppContext): RequestHandler {
  let limiter = burstLimiters.get(ctx);
  if (limiter) return limiter;
  limiter = rateLimit({
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
      const waitS = info?.resetTime ? Math.max(1, Math.ceil((info.resetTime.getTime() - Date.now()) / 1000)) : 60;
      next(
        new ApiError('tooManyRequests', `More than ${info?.limit ?? '?'} requests in a minute; wait ${waitS} s (Retry-After) or spread the calls out.`, {
          headers: { 'Retry-After': String(waitS) },
        }),
      );
    },
  });
  burstLimiters.set(ctx, limiter);
  return limiter;
}

function unitsOf(units: ((req: Request, res: Response) => number) | undefined, req: Request, res: Response): number {
  if (!units) return 1;
  const n = units(req, res);
  return Number.isFinite(n) && n >= 1 ? Math.floor(n) : 1;
}

/** Console calls: the burst limit through express-rate-limit, then the usage row; no key quota. */
async function meterSession(ctx: AppContext, endpoint: string, units: number, res: Response): Promise<void> {
  const caller = res.locals.caller as Caller;
  await recordConsoleUsage(ctx.database.db, { organisationId: caller.organisationId, userId: caller.userId, endpoint, day: utcDay(ctx.clock.now()), units });
}

/**
 * The `RateLimit-Policy` field of a key (constant while its limits are): worked out once, as a hash
 * and two formatted items per request add up on the hot path. Bounded like any per-key memo.
 */
const keyPolicies = new Map<string, { burstLimit: number; quota: number; burstItem: string; field: string }>();

function keyPolicy(burstKey: string, burstLimit: number, quota: number): { burstItem: string; field: string } {
  let policy = keyPolicies.get(burstKey);
  if (policy === undefined || policy.burstLimit !== burstLimit || policy.quota !== quota) {
    if (keyPolicies.size >= 10_000) keyPolicies.clear();
    // express-rate-limit's draft-8 partition key, so key and console answers carry the same header shape.
    const pk = Buffer.from(createHash('sha256').update(burstKey).digest('hex').slice(0, 12)).toString('base64');
    const burstItem = `"burst"; q=${burstLimit}; w=${BURST_WINDOW_MS / 1000}; pk=:${pk}:`;
    policy = { burstLimit, quota, burstItem, field: `${burstItem}, "daily"; q=${quota}; w=${SECONDS_PER_DAY}` };
    keyPolicies.set(burstKey, policy);
  }
  return policy;
}

/**
 * Key calls: burst hit and quota units come from the key's lease in this process (KeyLeases), so most
 * calls are decided without a database round trip; the answer carries the same `"burst"` and `"daily"`
 * RateLimit items as console calls. Returns a promise only when the call had to wait for a lease.
 */
function meterKey(ctx: AppContext, endpoint: string, units: number, res: Response): void | Promise<void> {
  const caller = res.locals.caller as Caller;
  const key = (res.locals.callerLimits as CallerLimits).key!;
  const now = ctx.clock.now();
  const day = utcDay(now);
  const burstKey = `key:${key.id}`;
  const decided = keyServicesFor(ctx.database, ctx.logger).leases.spend({
    keyId: key.id,
    organisationId: caller.organisationId,
    userId: caller.userId,
    endpoint,
    day,
    units,
    burst: { row: `burst:${burstKey}`, windowMs: BURST_WINDOW_MS },
  });
  const call = { organisationId: caller.organisationId, key, burstKey, units, now, day };
  if (decided instanceof Promise) return decided.then((decision) => applyKeyDecision(ctx, res, call, decision));
  applyKeyDecision(ctx, res, call, decided);
}

function applyKeyDecision(
  ctx: AppContext,
  res: Response,
  c: { organisationId: string; key: NonNullable<CallerLimits['key']>; burstKey: string; units: number; now: Date; day: string },
  decision: MeterDecision,
): void {
  const { key, burstKey, units, now, day } = c;
  const burst = decision.burst;
  const quota = decision.quota;
  // Each field is set once with its items joined (RFC 9651 lists), not appended item by item.
  let limit = '';
  let policy: string | undefined;
  if (burst) {
    const burstResetS = Math.max(0, Math.ceil((burst.resetAt.getTime() - Date.now()) / 1000));
    limit = `"burst"; r=${Math.max(0, burst.limit - burst.totalHits)}; t=${burstResetS}, `;
    const known = keyPolicy(burstKey, burst.limit, quota);
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
    sendQuotaWarnings(ctx, { organisationId: c.organisationId, key: { ...key, dailyQuota: quota }, day, used: decision.used, warned80: decision.warned80, warned100: decision.warned100 });
  }
}

/**
 * Admits a calculation or refuses it before any work: first the per-minute burst limit, then the
 * key's daily quota, spent atomically. `units` is how many calculation units the request costs
 * (default 1; a batch passes its item count); a request whose units do not fit is refused whole with 429.
 *
 * Key calls are decided by the key's lease in this process (see KeyLeases): units and burst hits are
 * reserved from the database in blocks, so no process can overspend, and usage rows are flushed in bulk. Console (session) calls go
 * through express-rate-limit (store in PostgreSQL) with the organisation's per-minute burst limit and
 * are recorded as the member's own usage (key null); they spend no key quota.
 *
 * Units are spent when the request is admitted, before the route validates its body: a request that
 * then fails validation has still cost its units (as with any per-request rate limit). Burst refusals
 * spend no daily units.
 */
export function meterCalculation(ctx: AppContext, endpoint: string, units?: (req: Request, res: Response) => number): RequestHandler {
  const burst = burstLimiter(ctx);
  return (req: Request, res: Response, next: NextFunction) => {
    const caller = res.locals.caller;
    if (!caller || !res.locals.callerLimits) {
      next(new Error('meterCalculation must run after requireCaller'));
      return;
    }
    if (caller.kind === 'key' && res.locals.callerLimits.key) {
      let pending: void | Promise<void>;
      try {
        pending = meterKey(ctx, endpoint, unitsOf(units, req, res), res);
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
        next(err);
        return;
      }
      meterSession(ctx, endpoint, unitsOf(units, req, res), res).then(() => next(), next);
    });
  };
}

/** `[requireCaller, meterCalculation]` for a calculation route. */
export function calculationGuard(ctx: AppContext, endpoint: string, units?: (req: Request, res: Response) => number): RequestHandler[] {
  return [requireCaller(ctx), meterCalculation(ctx, endpoint, units)];
}
