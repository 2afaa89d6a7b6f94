import { IncomingMessage, ServerResponse } from 'node:http';
import { Socket } from 'node:net';
import type { RequestHandler } from 'express';
import helmet, { type HelmetOptions } from 'helmet';

type ContentSecurityPolicyOptions = Parameters<typeof helmet.contentSecurityPolicy>[0];
type HeaderSet = { set: Map<string, string | string[]>; removed: string[] };

/** The header helmet takes away by default (its `xPoweredBy` option); set beforehand so that its removal shows. */
const POWERED_BY = 'X-Powered-By';

/** A real Node response that also remembers each header name as first set (spelling and order go on the wire). */
class NamingResponse extends ServerResponse {
  readonly names: string[] = [];

  override setHeader(name: string, value: number | string | readonly string[]): this {
    if (!this.hasHeader(name)) this.names.push(name);
    return super.setHeader(name, value);
  }
}

/**
 * helmet's security headers, worked out once: with static options every response gets the same
 * header set, so helmet runs a single time at start-up, as ordinary middleware on a real (unsent)
 * Node response, and each request only copies the headers it left there (one middleware instead of
 * helmet's chain of thirteen).
 */
function documentHeaders(options: HelmetOptions): HeaderSet {
  const req = new IncomingMessage(new Socket());
  req.method = 'GET';
  req.url = '/';
  const res = new NamingResponse(req);
  res.setHeader(POWERED_BY, 'probe');
  let failed: unknown;
  helmet(options)(req, res, (err?: unknown) => {
    failed = err;
  });
  if (failed) throw failed;
  const set = new Map<string, string | string[]>();
  for (const name of res.names) {
    const value = res.getHeader(name);
    if (name === POWERED_BY || value === undefined) continue;
    set.set(name, Array.isArray(value) ? [...value] : String(value));
  }
  return { set, removed: res.hasHeader(POWERED_BY) ? [] : [POWERED_BY] };
}

/** HSTS as helmet sends it (one year, subdomains): the same value on both surfaces. */
const HSTS_MAX_AGE_S = 365 * 24 * 60 * 60;
const STRICT_TRANSPORT_SECURITY = `max-age=${HSTS_MAX_AGE_S}; includeSubDomains`;

/**
 * The set for API answers (JSON, problem+json, CSV exports) and the health checks: the "Security
 * headers" table of the OWASP REST Security Cheat Sheet (from memory: Cache-Control no-store, a
 * frame-ancestors 'none' policy, HSTS, nosniff, X-Frame-Options DENY; Content-Type is set by each
 * answer), plus two of our own: `default-src 'none'` in the policy, so an answer that a browser did
 * render could load nothing, and a same-origin resource policy, so no other site, not even a sibling
 * subdomain that the SameSite=Lax session cookie would reach, can embed a cookie-authenticated answer.
 *
 * Why not helmet's set: its other headers (opener policy, origin-agent cluster, referrer policy, DNS
 * prefetch, download options, XSS filter, plug-in cross-domain policies) govern pages, and these
 * answers are never pages. Each header line costs every answer its bytes and about half a microsecond
 * of server time (measured, see DEVELOPERS.md "Speed").
 */
function apiHeaders(strictTransportSecurity: boolean): HeaderSet {
  const set = new Map<string, string>([
    ['Cache-Control', 'no-store'],
    ['Content-Security-Policy', "default-src 'none'; frame-ancestors 'none'"],
    ['Cross-Origin-Resource-Policy', 'same-origin'],
    ['X-Content-Type-Options', 'nosniff'],
    ['X-Frame-Options', 'DENY'],
  ]);
  if (strictTransportSecurity) set.set('Strict-Transport-Security', STRICT_TRANSPORT_SECURITY);
  return { set, removed: [] };
}

/**
 * `/api` and below, and the health checks, matched the way Express routes them (case-insensitive, on
 * the path without query or absolute-form origin); the docs and the console are pages.
 */
const API_PATH = /^\/(?:api(?:\/|$)|healthz\/?$|readyz\/?$)/i;

/**
 * Security headers on every response: the API set on `/api` and the health checks, helmet's document
 * set (with the given content security policy) on the docs and the console; HSTS on both when
 * `strictTransportSecurity` is set.
 */
export function securityHeaders(options: { strictTransportSecurity: boolean; contentSecurityPolicy: ContentSecurityPolicyOptions }): RequestHandler {
  const api = apiHeaders(options.strictTransportSecurity);
  const document = documentHeaders({
    contentSecurityPolicy: options.contentSecurityPolicy,
    strictTransportSecurity: options.strictTransportSecurity ? { maxAge: HSTS_MAX_AGE_S, includeSubDomains: true } : false,
  });
  return (req, res, next) => {
    const headers = API_PATH.test(req.path) ? api : document;
    res.setHeaders(headers.set);
    for (const name of headers.removed) res.removeHeader(name);
    next();
  };
}
