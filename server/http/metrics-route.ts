import { createHash, timingSafeEqual } from 'node:crypto';
import type { Request, RequestHandler } from 'express';
import type { AppMetrics } from '../metrics/app-metrics.ts';
import { notFoundHandler } from './error-middleware.ts';

const LOOPBACK = new Set(['127.0.0.1', '::1', '::ffff:127.0.0.1']);

/**
 * A caller on this machine: the socket's own address, never `X-Forwarded-For` (whatever TRUST_PROXY
 * says). A request that came through a reverse proxy is not local even when the proxy runs on this
 * machine: it carries the proxy's forwarding headers, and the proxy may be serving the internet.
 */
function fromLoopback(req: Request): boolean {
  const address = req.socket.remoteAddress;
  if (address === undefined || !LOOPBACK.has(address)) return false;
  return req.headers['x-forwarded-for'] === undefined && req.headers.forwarded === undefined && req.headers['x-real-ip'] === undefined;
}

const digest = (value: string) => createHash('sha256').update(value).digest();

/**
 * GET /metrics in Prometheus' text format: from loopback, or from anywhere with
 * `Authorization: Bearer <METRICS_TOKEN>` when that is set. Anyone else gets the plain 404 of an
 * unknown path, so the endpoint does not announce itself.
 */
export function metricsRoute(metrics: AppMetrics, token: string | undefined): RequestHandler {
  const expected = token === undefined ? undefined : digest(token);
  const authorised = (req: Request): boolean => {
    if (fromLoopback(req)) return true;
    if (!expected) return false;
    const header = req.headers.authorization;
    if (header === undefined || !header.startsWith('Bearer ')) return false;
    // Both sides hashed: equal lengths for the constant-time comparison, whatever was sent.
    return timingSafeEqual(digest(header.slice(7).trim()), expected);
  };
  return (req, res, next) => {
    if (!authorised(req)) {
      // The console's history fallback must not answer in its place.
      notFoundHandler(req, res, next);
      return;
    }
    metrics.exposition().then((text) => {
      res.setHeader('Cache-Control', 'no-store');
      res.type(metrics.contentType).send(text);
    }, next);
  };
}
