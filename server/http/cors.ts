import cors from 'cors';
import type { Request, RequestHandler } from 'express';
import type { AppContext } from '../context.ts';
import { BrowserOrigins } from '../auth/origins.ts';
import { openApiDocument } from '../openapi/document.ts';
import { ApiError } from './problem.ts';

/**
 * Cross-origin calls from web pages, for keys that list the pages' origins (`allowedOrigins`). Only
 * routes a key can call ever answer cross-origin, and only to requests made with such a key: console
 * and session routes never carry CORS fields, and credentials (cookies) are never allowed, so the
 * console's session stays first-party. Requests without `Origin` (servers, programs) pass untouched.
 */

/** Fields a page may read from an answer: the limits it runs under, when to retry, and the id support asks for. */
const EXPOSED_HEADERS = ['RateLimit', 'RateLimit-Policy', 'Retry-After', 'Request-Id'];
/** Request fields a page may send besides the safelisted ones. */
const ALLOWED_HEADERS = ['Authorization', 'Content-Type'];
/** How long a browser may reuse a preflight's answer; the key's own list is checked on every call regardless. */
export const PREFLIGHT_MAX_AGE_S = 600;

export const ORIGIN_REFUSED_DETAIL =
  'Origin not allowed for this key: add the page\'s origin to the key\'s allowedOrigins (console, PATCH /api/v1/keys/{id}, ' +
  'or `npm run keys -- create --origin`), or call from a server without an Origin header.';

/**
 * A request from a page of this server itself (the console, the API reference's "try it"): browsers
 * send `Origin` on same-origin writes too, and those are no cross-origin calls. `Sec-Fetch-Site` is
 * set by the browser alone; the comparison with Host covers browsers that do not send it.
 */
export function fromOwnPage(req: Request): boolean {
  return req.headers['sec-fetch-site'] === 'same-origin' || req.headers.origin === `${req.protocol}://${req.headers.host}`;
}

/**
 * The CORS middleware for actual requests made with one key, made once per verification: an `Origin`
 * in the key's list is answered with that origin, `Vary: Origin` and the exposed fields; any other is
 * refused with 403 before the request spends anything. Run it only for requests that carry `Origin`.
 */
export function keyCors(allowedOrigins: ReadonlySet<string>): RequestHandler {
  return cors({
    origin: (origin, callback) => {
      if (origin !== undefined && allowedOrigins.has(origin)) callback(null, origin);
      else callback(new ApiError('forbidden', ORIGIN_REFUSED_DETAIL));
    },
    exposedHeaders: EXPOSED_HEADERS,
  });
}

interface KeyRoute {
  pattern: RegExp;
  methods: string[];
}

const DOCUMENTED_METHODS = ['get', 'put', 'post', 'patch', 'delete'] as const;

/** `/api/v1/sweeps/{id}` → a regular expression matching it as Express routes do (any case, optional trailing slash). */
function patternOf(template: string): RegExp {
  const source = template
    .split(/(\{[^}]+\})/)
    .map((part) => (part.startsWith('{') ? '[^/]+' : part.replace(/[.*+?^$()|[\]\\]/g, '\\$&')))
    .join('');
  return new RegExp(`^${source}/?$`, 'i');
}

/** Paths and methods a key may call, from the OpenAPI document (operations whose security names `apiKey`). */
function keyRoutes(): KeyRoute[] {
  const routes: KeyRoute[] = [];
  for (const [template, item] of Object.entries(openApiDocument().paths ?? {})) {
    const methods = DOCUMENTED_METHODS.filter((m) => item?.[m]?.security?.some((requirement) => 'apiKey' in requirement)).map((m) => m.toUpperCase());
    if (methods.length > 0) routes.push({ pattern: patternOf(template), methods });
  }
  return routes;
}

/**
 * `OPTIONS` from a browser (a preflight) on a route a key can call: answered without a key (browsers
 * send none) and without charging anything, for origins that some usable key allows, with the route's
 * methods, the request fields pages need and a max-age. Other origins get a 403 without CORS fields,
 * which the browser reports as a refused request. OPTIONS without `Origin`, and on other routes, passes on.
 */
export function browserPreflight(ctx: AppContext): RequestHandler {
  const origins = new BrowserOrigins(ctx.database.db, ctx.keyServices, ctx.clock);
  const routes = keyRoutes();
  const byMethods = new Map<string, RequestHandler>();
  const preflightFor = (methods: string[]): RequestHandler => {
    const key = methods.join(',');
    let handler = byMethods.get(key);
    if (!handler) {
      handler = cors({
        origin: (origin, callback) => {
          if (origin === undefined) return callback(null, false);
          const allowed = origins.allows(origin);
          if (typeof allowed === 'boolean') callback(null, allowed);
          else allowed.then((ok) => callback(null, ok), (err: unknown) => callback(err as Error));
        },
        methods,
        allowedHeaders: ALLOWED_HEADERS,
        exposedHeaders: EXPOSED_HEADERS,
        maxAge: PREFLIGHT_MAX_AGE_S,
      });
      byMethods.set(key, handler);
    }
    return handler;
  };
  return (req, res, next) => {
    if (req.headers.origin === undefined) return next();
    const path = req.originalUrl.split('?', 1)[0]!;
    // A fixed path can also fit a template: Express would route the methods of both, so both count.
    const methods = [...new Set(routes.filter((route) => route.pattern.test(path)).flatMap((route) => route.methods))];
    if (methods.length === 0) return next();
    // The cors middleware ends an allowed preflight itself; it only calls on for a refused origin or an error.
    preflightFor(methods)(req, res, (err?: unknown) => {
      next(err ?? new ApiError('forbidden', 'No key allows requests from this origin: list it in a key\'s allowedOrigins first.'));
    });
  };
}
