import type { NextFunction, Request, RequestHandler, Response } from 'express';
import { eq } from 'drizzle-orm';
import type { AppContext } from '../context.ts';
import { organisations, users } from '../db/schema.ts';
import { fromOwnPage, keyCors } from '../http/cors.ts';
import { ApiError } from '../http/problem.ts';
import { hashApiKey, looksLikeApiKey } from './api-key.ts';
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

/**
 * The caller's limits as stored with the key or organisation, loaded with the caller so that the
 * meter (server/quota/meter.ts) does not look them up again; only the meter applies them.
 */
export interface CallerLimits {
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
  const services = ctx.keyServices;
  const hash = hashApiKey(presented);
  const usable = services.cacheUsable();
  if (usable) {
    const cached = services.cache.get(hash, now);
    if (cached) return { outcome: 'valid', key: cached };
  }
  if (!usable) return verifyApiKeyHash(ctx.database.db, hash, now);
  const verified = await verifyShared(ctx, hash, now);
  // A shared lookup was judged at its first caller's time; a key that expired since is expired for this one.
  if (verified.outcome === 'valid' && verified.key.expiresAt && verified.key.expiresAt <= now) return { outcome: 'expired' };
  return verified;
}

/**
 * A database verification shared by concurrent requests with the same key, its valid outcome cached
 * under the generation it started with (a change announced meanwhile discards it), an invalid one
 * dropping any cached entry.
 */
function verifyShared(ctx: AppContext, hash: string, now: Date): Promise<KeyVerification> {
  const services = ctx.keyServices;
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

async function callerFromKey(ctx: AppContext, req: Request, res: Response, header: string): Promise<KeyCaller> {
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
  ctx.keyServices.lastUsed.touch(k.keyId, now);
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
      admitKeyCaller(req, res, next, cached);
      return;
    }
    if (header !== undefined) {
      callerFromKey(ctx, req, res, header).then((made) => admitKeyCaller(req, res, next, made), next).catch(next);
      return;
    }
    callerFromSession(ctx, req, res).then((caller) => {
      if (!caller) throw unauthenticated();
      res.locals.caller = caller;
      next();
    }, next).catch(next);
  };
}

/**
 * A request made with a key goes on; one from another site's page (it carries `Origin`) only when the
 * key allows that origin, and then with the CORS fields the page needs to read the answer. Console
 * sessions never get those fields, so the console's cookie stays first-party.
 */
function admitKeyCaller(req: Request, res: Response, next: NextFunction, made: KeyCaller): void {
  res.locals.caller = made.caller;
  if (req.headers.origin === undefined || fromOwnPage(req)) next();
  else (made.fromBrowser ??= keyCors(made.allowedOrigins))(req, res, next);
}

/** The caller of a Bearer key found in the verified-key cache, or undefined (then the full check runs). */
function cachedCaller(ctx: AppContext, res: Response, header: string): KeyCaller | undefined {
  const match = BEARER_KEY.exec(header);
  const presented = match?.[1];
  if (!presented || !looksLikeApiKey(presented)) return undefined;
  const services = ctx.keyServices;
  if (!services.cacheUsable()) return undefined;
  const now = ctx.clock.now();
  const hash = hashApiKey(presented);
  const k = services.cache.get(hash, now);
  if (!k) return undefined;
  if (services.cache.isAging(hash)) {
    verifyShared(ctx, hash, now).catch((err: unknown) => ctx.logger.warn({ err }, 'could not verify a cached key again ahead of its expiry'));
  }
  services.lastUsed.touch(k.keyId, now);
  return callerFromVerifiedKey(res, k);
}

interface KeyCaller {
  caller: Caller;
  limits: CallerLimits;
  allowedOrigins: ReadonlySet<string>;
  /** The key's CORS middleware, made when a page first uses the key. */
  fromBrowser?: RequestHandler;
}

/**
 * The caller and limits of a verified key, made once per verification: the key cache hands out the
 * same record until the key changes, so the hot path allocates nothing here. Caller and limits are
 * frozen, as every request of that key shares them.
 */
const callersOfKeys = new WeakMap<VerifiedKey, KeyCaller>();

function callerFromVerifiedKey(res: Response, k: VerifiedKey): KeyCaller {
  let made = callersOfKeys.get(k);
  if (!made) {
    made = {
      caller: Object.freeze({ kind: 'key', userId: k.userId, organisationId: k.organisationId, role: k.role, keyId: k.keyId }),
      limits: Object.freeze({
        burstPerMinute: k.burstPerMinute,
        key: Object.freeze({ id: k.keyId, name: k.name, displayStart: k.displayStart, dailyQuota: k.dailyQuota, ownerEmail: k.ownerEmail }),
      }),
      allowedOrigins: k.allowedOrigins,
    };
    callersOfKeys.set(k, made);
  }
  res.locals.callerLimits = made.limits;
  return made;
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
