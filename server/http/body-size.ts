import type { Request, RequestHandler } from 'express';
import { ApiError } from './problem.ts';

const UNITS: Record<string, number> = { b: 1, kb: 1024, mb: 1024 ** 2, gb: 1024 ** 3 };

/** Bytes in a size such as `2mb` or `16MB` (1 kb = 1024 bytes, as body-parser counts). */
export function byteSize(size: string | number): number {
  if (typeof size === 'number') return size;
  const m = /^\s*(\d+(?:\.\d+)?)\s*(b|kb|mb|gb)?\s*$/i.exec(size);
  if (!m) throw new Error(`"${size}" is not a byte size; write it like 2mb or 512kb.`);
  return Math.floor(Number(m[1]) * UNITS[(m[2] ?? 'b').toLowerCase()]!);
}

/**
 * Refuses a request whose Content-Length already exceeds what its route accepts, before a single
 * body byte is read (RFC 9110 §15.5.14). body-parser and multer only notice while reading, and
 * body-parser then waits for the rest of the body before answering: a client claiming 1 GB would be
 * read to the end (or hold the request open) before hearing "too large". `limitFor` returns the
 * limit in bytes, or undefined for bodies that are streamed without one (NDJSON batches).
 * The connection is closed after the answer, so the unsent body is never waited for.
 */
export function refuseOversizedBodies(limitFor: (req: Request) => number | undefined): RequestHandler {
  return (req, res, next) => {
    const declared = req.headers['content-length'];
    if (declared === undefined) {
      next();
      return;
    }
    const length = Number(declared);
    const limit = limitFor(req);
    if (limit === undefined || !Number.isFinite(length) || length <= limit) {
      next();
      return;
    }
    res.setHeader('Connection', 'close');
    next(new ApiError('payloadTooLarge', `The body (${length} bytes) exceeds the limit of ${limit} bytes for this route; split the work into smaller requests.`));
  };
}
