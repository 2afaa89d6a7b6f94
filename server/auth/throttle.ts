import type { Request, RequestHandler } from 'express';
import { rateLimit, type RateLimitInfo } from 'express-rate-limit';
import type { AppContext } from '../context.ts';
import { ApiError } from '../http/problem.ts';
import { PgRateLimitStore } from '../quota/pg-rate-limit-store.ts';

const FIFTEEN_MINUTES_MS = 15 * 60 * 1000;

/** Failed sign-ins allowed per account in 15 minutes (OWASP authentication cheat sheet: throttle per account). */
export const SIGN_IN_FAILURES_PER_ACCOUNT = 5;
/** Failed sign-ins allowed per client address in 15 minutes, across accounts (slows password spraying). */
export const SIGN_IN_FAILURES_PER_ADDRESS = 20;
/** Reset e-mails per client address in 15 minutes. */
export const RESET_REQUESTS_PER_ADDRESS = 20;
/** Reset e-mails per account in 15 minutes; more requests are answered the same way but send nothing. */
export const RESET_MAILS_PER_ACCOUNT = 3;

function waitSeconds(req: Request): number {
  const info = (req as Request & { rateLimit?: RateLimitInfo }).rateLimit;
  return info?.resetTime ? Math.max(1, Math.ceil((info.resetTime.getTime() - Date.now()) / 1000)) : FIFTEEN_MINUTES_MS / 1000;
}

function throttle(ctx: AppContext, o: { prefix: string; limit: number; onlyFailures: boolean; key?: (req: Request, res: Parameters<RequestHandler>[1]) => string; message: (waitS: number) => string }): RequestHandler {
  return rateLimit({
    windowMs: FIFTEEN_MINUTES_MS,
    limit: o.limit,
    skipSuccessfulRequests: o.onlyFailures,
    standardHeaders: false,
    legacyHeaders: false,
    ...(o.key ? { keyGenerator: o.key } : {}),
    store: new PgRateLimitStore(ctx.database.pool, o.prefix),
    handler: (req, _res, next) => {
      const waitS = waitSeconds(req);
      next(new ApiError('tooManyRequests', o.message(waitS), { headers: { 'Retry-After': String(waitS) } }));
    },
  });
}

/** Counts failed sign-ins per client address; mount before the body is validated. */
export function signInThrottleByAddress(ctx: AppContext): RequestHandler {
  return throttle(ctx, {
    prefix: 'sign-in:address:',
    limit: SIGN_IN_FAILURES_PER_ADDRESS,
    onlyFailures: true,
    message: (s) => `Too many failed sign-ins from your address; try again in ${s} s.`,
  });
}

/** Counts failed sign-ins per account (the lower-cased address in the validated body). */
export function signInThrottleByAccount(ctx: AppContext): RequestHandler {
  return throttle(ctx, {
    prefix: 'sign-in:account:',
    limit: SIGN_IN_FAILURES_PER_ACCOUNT,
    onlyFailures: true,
    key: (_req, res) => String((res.locals.body as { email: string }).email).toLowerCase(),
    message: (s) => `Too many failed sign-ins for this account; try again in ${s} s, or choose a new password via POST /api/v1/password-reset.`,
  });
}

export function resetThrottleByAddress(ctx: AppContext): RequestHandler {
  return throttle(ctx, {
    prefix: 'reset:address:',
    limit: RESET_REQUESTS_PER_ADDRESS,
    onlyFailures: false,
    message: (s) => `Too many password-reset requests from your address; try again in ${s} s.`,
  });
}

/** Per-account reset mails are counted without answering differently, so the answer reveals nothing. */
export function resetMailCounter(ctx: AppContext): { allow(email: string): Promise<boolean> } {
  const store = new PgRateLimitStore(ctx.database.pool, 'reset:account:');
  store.init({ windowMs: FIFTEEN_MINUTES_MS } as Parameters<PgRateLimitStore['init']>[0]);
  return {
    async allow(email) {
      const { totalHits } = await store.increment(email.toLowerCase());
      return totalHits <= RESET_MAILS_PER_ACCOUNT;
    },
  };
}
