import type { IncomingMessage } from 'node:http';
import { finished, type Readable } from 'node:stream';
import { createGunzip } from 'node:zlib';
import { ApiError } from '../../../http/problem.ts';

/** The content codings an NDJSON batch may arrive in (RFC 9110 §8.4.1); `x-gzip` is gzip's old name. */
export const NDJSON_ACCEPTED_ENCODINGS = ['gzip', 'x-gzip', 'identity'] as const;

/**
 * Most bytes a compressed NDJSON body may decode to. A plain body has no total limit: its sender pays
 * for every byte it sends. A compressed one can stand for a thousand times its size (gzip's ratio on
 * runs of one byte), so the decoded bytes are capped: room for half a million items or more, while a
 * decompression bomb costs at most this much inflating before it is refused.
 */
export const MAX_NDJSON_DECODED_BYTES = 64 * 1024 * 1024;

export type NdjsonCoding = 'gzip' | 'identity';

/**
 * The coding of an NDJSON body from its Content-Encoding: gzip (or x-gzip) and identity, in any case;
 * anything else (deflate, br, compress, an unknown name, or a list of codings) is refused with 415
 * naming the accepted ones, before any body byte is read.
 */
export function ndjsonCodingOf(req: IncomingMessage): NdjsonCoding {
  const header = req.headers['content-encoding'];
  const value = (header ?? '').trim().toLowerCase();
  if (value === '' || value === 'identity') return 'identity';
  if (value === 'gzip' || value === 'x-gzip') return 'gzip';
  throw new ApiError(
    'unsupportedMediaType',
    `An NDJSON batch takes Content-Encoding gzip (or x-gzip), or none (identity); "${header}" is not accepted. Send the lines gzip-compressed or plain.`,
    // RFC 9110 §15.5.16: a 415 caused by the content coding says which codings would have been taken.
    { headers: { 'Accept-Encoding': 'gzip' } },
  );
}

/**
 * The decoded bytes of the body, pulled as they are read. A plain body is the request itself; a gzip
 * body passes through node:zlib with back-pressure (the request is paused while the inflater's buffers
 * are full) and is cut off with 413 once it decodes to more than `maxDecodedBytes`, so a bomb never
 * inflates further. Corrupt or truncated gzip ends in a 400 problem. Stopping early never destroys the
 * request: its socket carries the answer.
 */
export function decodedBody(req: Readable, coding: NdjsonCoding, maxDecodedBytes = MAX_NDJSON_DECODED_BYTES): AsyncIterable<Buffer> {
  if (coding === 'identity') return req.iterator({ destroyOnReturn: false }) as AsyncIterable<Buffer>;
  return gunzipped(req, maxDecodedBytes);
}

async function* gunzipped(req: Readable, maxDecodedBytes: number): AsyncGenerator<Buffer> {
  const gunzip = createGunzip();
  // pipe (not pipeline): an inflater that fails or stops is unpiped and leaves the request open.
  req.pipe(gunzip);
  // A client that goes away mid-body ends the inflater too, which would otherwise wait for more input.
  const stopWatching = finished(req, (err) => {
    if (err) gunzip.destroy(err);
  });
  let decoded = 0;
  try {
    for await (const chunk of gunzip as AsyncIterable<Buffer>) {
      decoded += chunk.length;
      if (decoded > maxDecodedBytes) {
        throw new ApiError(
          'payloadTooLarge',
          `The gzip body decodes to more than ${maxDecodedBytes} bytes, the limit for a compressed NDJSON batch; send the job in several requests, or uncompressed.`,
        );
      }
      yield chunk;
    }
  } catch (err) {
    if (isZlibError(err)) {
      throw new ApiError('badRequest', `The body is not valid gzip (${(err as Error).message}); compress the whole NDJSON body with gzip, or send it plain without Content-Encoding.`, { cause: err });
    }
    throw err;
  } finally {
    stopWatching();
    req.unpipe(gunzip);
    gunzip.destroy();
  }
}

/** zlib's own failures (bad header, bad data, a stream cut short) carry Z_* codes. */
function isZlibError(err: unknown): boolean {
  const code = (err as { code?: unknown } | null)?.code;
  return typeof code === 'string' && code.startsWith('Z_');
}
