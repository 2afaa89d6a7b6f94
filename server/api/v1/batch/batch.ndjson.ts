import type { RequestHandler, Response } from 'express';
import type { AppContext } from '../../../context.ts';
import { callerOf } from '../../../auth/caller.ts';
import { ApiError, type Problem } from '../../../http/problem.ts';
import { isDatabaseUnavailable, isStatementCancelled } from '../../../db/unavailable.ts';
import { cableIdsIn, cableLookupFor } from '../cables/cable-lookup.ts';
import { chargeUnits, quotaSpentProblem, remainingUnits } from './batch.quota.ts';
import { runItem } from './batch.service.ts';
import { decodedBody, ndjsonCodingOf } from './batch.encoding.ts';

export const NDJSON_TYPE = 'application/x-ndjson';
/** Longest input line; a longer one gets a problem line and is skipped without being held in memory. */
export const MAX_NDJSON_LINE_BYTES = 64 * 1024;
/** Items charged, computed and answered together; with the byte cap below it bounds the memory of a stream. */
export const NDJSON_BLOCK_ITEMS = 1000;
const NDJSON_BLOCK_BYTES = 1024 * 1024;
/** Output is handed to the socket in pieces of about this size. */
const WRITE_CHUNK_CHARS = 64 * 1024;

/** One physical input line: its text, or a marker that it was too long to keep. */
type RawLine = { lineNo: number; text: string } | { lineNo: number; tooLong: true };

/**
 * Splits a byte stream into LF-terminated lines (a CR before the LF is dropped) without ever holding
 * more than one line of at most `maxBytes`; the rest of a longer line is skipped as it arrives.
 * Reading is pulled, so a consumer that stops pulling stops the socket (back-pressure).
 */
export async function* readLines(stream: AsyncIterable<Buffer>, maxBytes: number): AsyncGenerator<RawLine> {
  let parts: Buffer[] = [];
  let size = 0;
  let tooLong = false;
  let lineNo = 0;
  const finish = (): RawLine => {
    lineNo++;
    if (tooLong) return { lineNo, tooLong: true };
    let text = parts.length === 1 ? parts[0]!.toString('utf8') : Buffer.concat(parts, size).toString('utf8');
    if (text.endsWith('\r')) text = text.slice(0, -1);
    return { lineNo, text };
  };
  for await (const chunk of stream) {
    let pos = 0;
    while (pos <= chunk.length) {
      const nl = chunk.indexOf(10, pos);
      const end = nl === -1 ? chunk.length : nl;
      if (!tooLong && end > pos) {
        if (size + (end - pos) > maxBytes) {
          tooLong = true;
          parts = [];
          size = 0;
        } else {
          parts.push(chunk.subarray(pos, end));
          size += end - pos;
        }
      }
      if (nl === -1) break;
      yield finish();
      parts = [];
      size = 0;
      tooLong = false;
      pos = nl + 1;
    }
  }
  if (size > 0 || tooLong) yield finish();
}

interface Block {
  /** Non-blank lines in input order. */
  lines: RawLine[];
  /** True when the input ended with this block. */
  last: boolean;
}

/** Reads the next block of non-blank lines: up to NDJSON_BLOCK_ITEMS lines or about NDJSON_BLOCK_BYTES. */
async function nextBlock(lines: AsyncGenerator<RawLine>): Promise<Block> {
  const block: RawLine[] = [];
  let bytes = 0;
  while (block.length < NDJSON_BLOCK_ITEMS && bytes < NDJSON_BLOCK_BYTES) {
    const next = await lines.next();
    if (next.done) return { lines: block, last: true };
    const line = next.value;
    if ('text' in line) {
      if (line.text.trim() === '') continue;
      bytes += line.text.length;
    }
    block.push(line);
  }
  return { lines: block, last: false };
}

/** Buffered writer that waits for `drain` whenever the socket is full, so output never piles up in memory. */
class LineWriter {
  private pending = '';
  private closed = false;

  constructor(private readonly res: Response) {
    res.once('close', () => {
      this.closed = true;
    });
  }

  get gone(): boolean {
    return this.closed;
  }

  async line(value: unknown): Promise<void> {
    this.pending += `${JSON.stringify(value)}\n`;
    if (this.pending.length >= WRITE_CHUNK_CHARS) await this.flush();
  }

  async flush(): Promise<void> {
    if (this.pending === '' || this.closed) return;
    const ok = this.res.write(this.pending);
    this.pending = '';
    if (ok) return;
    await new Promise<void>((resolve) => {
      const done = () => {
        this.res.off('drain', done);
        this.res.off('close', done);
        resolve();
      };
      this.res.on('drain', done);
      this.res.on('close', done);
    });
  }
}

interface StreamState {
  lines: AsyncGenerator<RawLine>;
  first: Block;
  /** Units the meter charged for the first block (it may be fewer than its lines when the quota is nearly spent). */
  firstGranted: number;
}

declare global {
  namespace Express {
    interface Locals {
      ndjson?: StreamState;
    }
  }
}

/**
 * Reads the first block before the meter runs, so the meter can charge it (and refuse the request with
 * a plain 429 when nothing is left) while no response has started yet.
 */
export function readFirstBlock(ctx: AppContext): RequestHandler {
  return async (req, res, next) => {
    // Refused before a byte is read or a unit charged.
    const coding = ndjsonCodingOf(req);
    const lines = readLines(decodedBody(req, coding), MAX_NDJSON_LINE_BYTES);
    let first: Block;
    try {
      first = await nextBlock(lines);
    } catch (err) {
      // A body refused part-way (corrupt gzip, decoded beyond its limit): read and drop the rest, so
      // the client sees the problem rather than a reset.
      req.resume();
      throw err;
    }
    if (first.lines.length === 0) {
      throw new ApiError('validation', 'The NDJSON body has no items; send one JSON object { "op": …, "input": { … } } per line.');
    }
    const remaining = await remainingUnits(ctx, res);
    // Nothing left: charge the whole block so the meter refuses it with its usual 429 and Retry-After.
    const firstGranted = remaining === 0 ? first.lines.length : Math.min(first.lines.length, remaining);
    res.locals.ndjson = { lines, first, firstGranted };
    next();
  };
}

function itemOf(line: RawLine): { ok: true; item: unknown } | { ok: false; problem: Problem } {
  if (!('text' in line)) {
    const message = `the line is longer than ${MAX_NDJSON_LINE_BYTES} bytes; one item is far smaller, so check that items are separated by line feeds`;
    return { ok: false, problem: new ApiError('payloadTooLarge', message, { errors: [{ field: '', message }] }).toProblem() };
  }
  try {
    return { ok: true, item: JSON.parse(line.text) as unknown };
  } catch {
    const message = 'the line is not valid JSON; each line holds one object { "op": …, "input": { … } }';
    return { ok: false, problem: new ApiError('malformedJson', message, { errors: [{ field: '', message }] }).toProblem() };
  }
}

/**
 * Answers the stream: one result line per input line, in order, then one closing line. Runs after the
 * meter charged the first block; later blocks are charged as they come.
 */
export function streamResults(ctx: AppContext): RequestHandler {
  return async (req, res) => {
    const state = res.locals.ndjson!;
    const organisationId = callerOf(res).organisationId;
    const summary = { items: 0, succeeded: 0, failed: 0, unitsCharged: 0 };
    const writer = new LineWriter(res);
    res.status(200);
    res.setHeader('Content-Type', `${NDJSON_TYPE}; charset=utf-8`);
    res.setHeader('Cache-Control', 'no-store');

    const finish = async (end: Record<string, unknown>) => {
      await writer.line({ end: end.problem ? 'stopped' : 'complete', ...end, summary });
      await writer.flush();
      res.end();
      // Stop reading lines (the socket stays open: destroyOnReturn is false), then read and drop
      // whatever the client still sends, so it sees the answer rather than a reset.
      await state.lines.return(undefined);
      req.resume();
    };

    let block = state.first;
    let granted = state.firstGranted;
    /** The last input line computed: a stop part-way through the body names the one after it. */
    let lastLine = 0;
    try {
      for (;;) {
        summary.unitsCharged += granted;
        const items = block.lines.slice(0, granted).map(itemOf);
        const cables = await cableLookupFor(ctx.database.db, organisationId, cableIdsIn(items.map((i) => (i.ok ? i.item : null))));
        for (let i = 0; i < items.length; i++) {
          const lineNo = block.lines[i]!.lineNo;
          lastLine = lineNo;
          const parsed = items[i]!;
          const outcome = parsed.ok ? runItem(parsed.item, '', cables, req.log) : parsed;
          summary.items++;
          if (outcome.ok) summary.succeeded++;
          else summary.failed++;
          await writer.line({ line: lineNo, ...outcome });
          if (writer.gone) return;
        }
        if (granted < block.lines.length) {
          const nextLine = block.lines[granted]!.lineNo;
          await finish({ problem: quotaSpentProblem(ctx, res, nextLine), nextLine });
          return;
        }
        if (block.last) break;
        await writer.flush();
        block = await nextBlock(state.lines);
        if (block.lines.length === 0) break;
        granted = await chargeUnits(ctx, res, 'batch', block.lines.length);
      }
      await finish({});
    } catch (err) {
      if (writer.gone) return;
      const client = (err as { code?: string }).code === 'ECONNRESET' || (err as { code?: string }).code === 'ERR_STREAM_PREMATURE_CLOSE';
      if (client) return;
      if (err instanceof ApiError && (err.kind === 'payloadTooLarge' || err.kind === 'badRequest')) {
        // The body itself stopped the stream (corrupt gzip, decoded beyond its limit); lines read since
        // the last computed one were neither computed nor charged.
        await finish({ problem: err.toProblem(), nextLine: lastLine + 1 });
        return;
      }
      const problem = isDatabaseUnavailable(err) || isStatementCancelled(err)
        ? new ApiError('unavailable', 'The database became unreachable or too slow, so no more items could be charged; send the remaining lines again shortly.').toProblem()
        : new ApiError('internal', 'The stream stopped because of a fault on our side; send the remaining lines again. The request id in Request-Id helps us find it.').toProblem();
      if (problem.status === 500) req.log?.error({ err }, 'NDJSON batch failed');
      await finish({ problem });
    }
  };
}
