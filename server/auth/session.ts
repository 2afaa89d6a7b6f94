import { randomBytes, timingSafeEqual } from 'node:crypto';
import connectPgSimple from 'connect-pg-simple';
import type { Request, RequestHandler, Response } from 'express';
import session from 'express-session';
import type { AppContext } from '../context.ts';

declare module 'express-session' {
  interface SessionData {
    /** The signed-in member; role and disabled state are re-read on every request. */
    userId: string;
    /** Synchronizer token the console echoes in `X-CSRF-Token` on writes. */
    csrfToken: string;
  }
}

export const SESSION_COOKIE = 'gammaline.sid';
export const CSRF_HEADER = 'x-csrf-token';

/** A console session lasts a working day; signing in again is cheap. */
const SESSION_MAX_AGE_MS = 12 * 60 * 60 * 1000;

const SAFE_METHODS = new Set(['GET', 'HEAD', 'OPTIONS']);

/**
 * Console sessions kept in PostgreSQL (`user_sessions`, created by the migrations). The cookie is
 * httpOnly and SameSite=Lax everywhere and Secure in production (OWASP session management cheat sheet);
 * nothing is stored until someone signs in.
 */
export function sessionMiddleware(ctx: AppContext): RequestHandler {
  const PgStore = connectPgSimple(session);
  const store = new PgStore({
    pool: ctx.database.pool,
    tableName: 'user_sessions',
    createTableIfMissing: false,
    errorLog: (...args: unknown[]) => ctx.logger.warn({ detail: args.map(String).join(' ') }, 'session store'),
  });
  const withSession = session({
    name: SESSION_COOKIE,
    secret: ctx.config.sessionSecret,
    store,
    resave: false,
    saveUninitialized: false,
    cookie: {
      httpOnly: true,
      sameSite: 'lax',
      secure: ctx.config.mode === 'production',
      maxAge: SESSION_MAX_AGE_MS,
      path: '/',
    },
  });
  // A key call without cookies uses no session (the Bearer header wins, console-only routes refuse
  // keys), so it skips the session machinery: no session object, no end-of-response hooks. Sign-in
  // (POST /session, relative to the /api/v1 mount) creates one whatever headers come with it.
  return (req, res, next) => {
    if (req.headers.cookie === undefined && BEARER.test(req.headers.authorization ?? '') && !(req.method === 'POST' && SIGN_IN_PATH.test(req.path))) {
      next();
      return;
    }
    withSession(req, res, next);
  };
}

const BEARER = /^Bearer /i;
const SIGN_IN_PATH = /^\/session\/?$/i;

/** Starts a session for `userId` under a NEW id (no session fixation) and returns its CSRF token. */
export async function startSession(req: Request, userId: string): Promise<string> {
  await new Promise<void>((resolve, reject) => req.session.regenerate((err: unknown) => (err ? reject(err) : resolve())));
  const csrfToken = randomBytes(32).toString('base64url');
  req.session.userId = userId;
  req.session.csrfToken = csrfToken;
  await new Promise<void>((resolve, reject) => req.session.save((err: unknown) => (err ? reject(err) : resolve())));
  return csrfToken;
}

/** Removes the session row and tells the browser to drop the cookie. */
export async function endSession(req: Request, res: Response): Promise<void> {
  if (req.session) {
    await new Promise<void>((resolve, reject) => req.session.destroy((err: unknown) => (err ? reject(err) : resolve())));
  }
  res.clearCookie(SESSION_COOKIE, { path: '/' });
}

/** Writes through a cookie must echo the session's token; reads and Bearer calls need none. */
export function csrfSatisfied(req: Request): boolean {
  if (SAFE_METHODS.has(req.method)) return true;
  const expected = req.session?.csrfToken;
  const sent = req.get(CSRF_HEADER);
  if (!expected || !sent) return false;
  const a = Buffer.from(expected);
  const b = Buffer.from(sent);
  return a.length === b.length && timingSafeEqual(a, b);
}
