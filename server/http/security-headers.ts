import type { IncomingMessage, ServerResponse } from 'node:http';
import type { RequestHandler } from 'express';
import helmet, { type HelmetOptions } from 'helmet';

type ContentSecurityPolicyOptions = Parameters<typeof helmet.contentSecurityPolicy>[0];
type HeaderSet = { set: Map<string, string | string[]>; removed: string[] };

/**
 * helmet's security headers, worked out once: with static options every response gets the same
 * header set, so helmet runs a single time at start-up against a recording response and each request
 * only copies the recorded headers (one middleware instead of helmet's chain of thirteen).
 */
function documentHeaders(options: HelmetOptions): HeaderSet {
  const set: [string, string | string[]][] = [];
  const removed: string[] = [];
  const recorder = {
    setHeader(name: string, value: string | number | readonly string[]) {
      set.push([name, Array.isArray(value) ? [...(value as string[])] : String(value)]);
      return recorder;
    },
    removeHeader(name: string) {
      removed.push(name);
    },
    getHeader() {
      return undefined;
    },
  };
  let failed: unknown;
  helmet(options)({ headers: {}, method: 'GET', url: '/' } as IncomingMessage, recorder as unknown as ServerResponse, (err?: unknown) => {
    failed = err;
  });
  if (failed) throw failed;
  return { set: new Map(set), removed };
}

/** HSTS as helmet sends it (one year, subdomains): the same value on both surfaces. */
const STRICT_TRANSPORT_SECURITY = 'max-age=31536000; includeSubDomains';

/**
 * The set for API answers (JSON, problem+json, CSV exports): the "Security headers" table of the
 * OWASP REST Security Cheat Sheet (from memory: Cache-Control no-store, a frame-ancestors 'none'
 * policy, HSTS, nosniff, X-Frame-Options DENY; Content-Type is set by each answer). The policy also
 * says `default-src 'none'`, so an answer that a browser did render could load nothing.
 *
 * Why not helmet's set: its other headers (opener and resource policies, origin-agent cluster,
 * referrer policy, DNS prefetch, download options, XSS filter, plug-in cross-domain policies) govern
 * pages, and API answers are never pages: nosniff and the JSON media type keep browsers from
 * rendering them, and the console's cookie is SameSite=Lax, so other sites cannot read
 * cookie-authenticated answers by embedding them. Each header line costs every answer its bytes and
 * about a microsecond of server time (measured, see DEVELOPERS.md "Speed").
 */
function apiHeaders(strictTransportSecurity: boolean): HeaderSet {
  const set = new Map<string, string>([
    ['Cache-Control', 'no-store'],
    ['Content-Security-Policy', "default-src 'none'; frame-ancestors 'none'"],
    ['X-Content-Type-Options', 'nosniff'],
    ['X-Frame-Options', 'DENY'],
  ]);
  if (strictTransportSecurity) set.set('Strict-Transport-Security', STRICT_TRANSPORT_SECURITY);
  return { set, removed: [] };
}

/** `/api` and everything below it; the docs and the console are documents. */
function isApiUrl(url: string): boolean {
  return url.startsWith('/api/') || url === '/api' || url.startsWith('/api?');
}

/**
 * Security headers on every response: the API set on `/api`, helmet's document set (with the given
 * content security policy) on the docs and the console. HSTS is sent on both when `strictTransportSecurity` is set.
 */
export function securityHeaders(options: { strictTransportSecurity: boolean; contentSecurityPolicy: ContentSecurityPolicyOptions }): RequestHandler {
  const api = apiHeaders(options.strictTransportSecurity);
  const document = documentHeaders({
    contentSecurityPolicy: options.contentSecurityPolicy,
    strictTransportSecurity: options.strictTransportSecurity ? { maxAge: 31536000, includeSubDomains: true } : false,
  });
  return (req, res, next) => {
    const headers = isApiUrl(req.url) ? api : document;
    res.setHeaders(headers.set);
    for (const name of headers.removed) res.removeHeader(name);
    next();
  };
}
