import { randomBytes } from 'node:crypto';
import type { Express, Request, RequestHandler, Response } from 'express';
import type { Logger } from 'pino';
import type { AppMetrics } from '../metrics/app-metrics.ts';

declare module 'http' {
  interface IncomingMessage {
    /** The request id sent back in `Request-Id` and written on every log line of the request. */
    id: string;
    /** A logger bound to the request id (made on first use). */
    log: Logger;
    /** performance.now() when the request reached the app: the start of its logged and measured time. */
    receivedAtMs: number;
  }
}

const REQUEST_ID_PATTERN = /^[A-Za-z0-9._-]{1,64}$/;

/**
 * Minted ids keep the UUID shape (8-4-4-4-12 hex): a random prefix per process and a counter in the
 * last group, unique across processes and cheaper than drawing a random UUID per request.
 */
const ID_PREFIX = ((h) => `${h.slice(0, 8)}-${h.slice(8, 12)}-4${h.slice(13, 16)}-8${h.slice(17, 20)}-`)(randomBytes(10).toString('hex'));
let minted = 0;

/**
 * Request ids and the access log: one line per finished request with method, path (never the query
 * string, which can carry tokens), status and time; never headers, so keys, cookies and CSRF tokens
 * cannot reach the log. A caller's own id (`X-Request-Id`, or `Request-Id`) is echoed when it is a short
 * printable token, safe to log; otherwise one is minted. Support finds a call by the `Request-Id` answered. `req.log` is a child logger created only when a route logs something: on the hot path
 * a request costs an id and, when info is enabled, one small line.
 */
export function requestLog(app: Express, logger: Logger, metrics?: AppMetrics): RequestHandler {
  Object.defineProperty(app.request, 'log', {
    configurable: true,
    get(this: Request) {
      const child = logger.child({ reqId: this.id });
      Object.defineProperty(this, 'log', { value: child, configurable: true, writable: true });
      return child;
    },
  });
  const logging = logger.isLevelEnabled('info');
  // One listener function for every request (`this` is the response): no closure per request.
  function finished(this: Response): void {
    const req = this.req;
    const status = this.statusCode;
    const ms = performance.now() - req.receivedAtMs;
    metrics?.observeRequest(req.route as { path: unknown } | undefined, req.originalUrl, req.method, status, ms / 1000);
    if (!logging) return;
    const queryAt = req.originalUrl.indexOf('?');
    const line = {
      reqId: req.id,
      req: { method: req.method, path: queryAt === -1 ? req.originalUrl : req.originalUrl.slice(0, queryAt) },
      res: { statusCode: status },
      responseTime: Math.round(ms),
    };
    if (status >= 500) logger.error(line, 'request failed');
    else logger.info(line, 'request completed');
  }
  const listen = logging || metrics !== undefined;
  return (req, res, next) => {
    const incoming = req.headers['x-request-id'] ?? req.headers['request-id'];
    const id = typeof incoming === 'string' && REQUEST_ID_PATTERN.test(incoming) ? incoming : `${ID_PREFIX}${(++minted).toString(16).padStart(12, '0')}`;
    req.id = id;
    res.setHeader('Request-Id', id);
    if (listen) {
      req.receivedAtMs = performance.now();
      res.on('finish', finished);
    }
    next();
  };
}
