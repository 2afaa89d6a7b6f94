import type { IncomingMessage, ServerResponse } from 'node:http';
import type { RequestHandler } from 'express';
import helmet, { type HelmetOptions } from 'helmet';

/**
 * helmet's security headers, worked out once: with static options every response gets the same
 * header set, so helmet runs a single time at start-up against a recording response and each request
 * only copies the recorded headers (one middleware instead of helmet's chain of thirteen).
 */
export function securityHeaders(options: HelmetOptions): RequestHandler {
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
  const headers = new Map(set);
  return (_req, res, next) => {
    res.setHeaders(headers);
    for (const name of removed) res.removeHeader(name);
    next();
  };
}
