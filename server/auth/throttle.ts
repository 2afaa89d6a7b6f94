import type { Request, RequestHandler } from 'express';
import { rateLimit, type RateLimitInfo } from 'express-rate-limit';
import type { AppContext, Clock } from '../context.ts';
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

function waitSeconds(req: Request, clock: Clock): number {
  const info = (req as Request & { rateLimit?: RateLimitInfo }).rateLimit;
  return info?.resetTime ? Math.max(1, Math.ceil((info.resetTime.getTime() - clock.nowMs()) / 1000)) : FIFTEEN_MINUTES_MS / 1000;
}

interface ThrottleOptions {
  /** Row prefix in the shared store: one counter per prefix and key. */
  prefix: string;
  limit: number;
  /** Count only answers of 400 and above (failed sign-ins), not every request. */
  onlyFailures: boolean;
  /** Whom to count; the client address when omitted. */
  key?: (req: Request) => string;
  message: (waitS: number) => string;
}

function throttle(ctx: AppContext, options: ThrottleOptions): RequestHandler {
  return rateLimit({
    windowMs: FIFTEEN_MINUTES_MS,
    limit: options.limit,
    skipSuccessfulRequests: options.onlyFailures,
    standardHeaders: false,
    legacyHeaders: false,
    ...(options.key ? { keyGenerator: options.key } : {}),
    store: new PgRateLimitStore(ctx.database.pool, options.prefix),
    handler: (req, _res, next) => {
      const waitS = waitSeconds(req, ctx.clock);
      next(new ApiError('tooManyRequests', options.message(waitS), { headers: { 'Retry-After': String(waitS) } }));
    },
  });
}

/**
 * The lower-cased e-mail of a sign-in body. The throttle runs after the body was validated, so the
 * address is a string; anything else would be a route that lost its validator, counted under "".
 */
function signInEmail(req: Request): string {
  const email = (req.body as { email?: unknown } | undefined)?.email;
  return typeof email === 'string' ? email.toLowerCase() : '';
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
    key: signInEmail,
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
