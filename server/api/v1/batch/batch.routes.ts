import express, { Router, type RequestHandler } from 'express';
import { z } from '../../../zod.ts';
import { BatchEnvelopeSchema, BatchItemSchema, BatchRequestSchema, MAX_BATCH_ITEMS } from '../../../../shared/schemas/batch.ts';
import { LineResultSchema, MatchResultSchema, MismatchResultSchema, ReferResultSchema, ReflectionResultSchema } from '../../../../shared/schemas/calculations.ts';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireCaller } from '../../../auth/caller.ts';
import { meterCalculation } from '../../../quota/meter.ts';
import { keyOrSession } from '../../../auth/openapi.ts';
import { meteredProblems, rateLimitHeaders } from '../../../quota/openapi.ts';
import { ApiError, ProblemSchema } from '../../../http/problem.ts';
import { input, keepValidatedBody } from '../../../http/validate.ts';
import { apiErrorFromZod } from '../../../http/zod-issues.ts';
import { problemResponses, registry } from '../../../openapi/registry.ts';
import { cableIdsIn, cableLookupFor } from '../cables/cable-lookup.ts';
import { MAX_NDJSON_LINE_BYTES, NDJSON_BLOCK_ITEMS, NDJSON_TYPE, readFirstBlock, streamResults } from './batch.ndjson.ts';
import { runItem, type ItemOutcome } from './batch.service.ts';
import { MAX_NDJSON_DECODED_BYTES } from './batch.encoding.ts';

/**
 * JSON body limit of POST /api/v1/batch alone (the app-wide limit stays small): room for
 * MAX_BATCH_ITEMS items of a few hundred bytes each. app.ts leaves this path's body to this router.
 */
export const BATCH_JSON_LIMIT = '16mb';
/** Items computed between two yields to the event loop, so one big batch never starves other requests. */
const YIELD_EVERY = 1000;
/**
 * Items per piece handed to the socket (about 50 KB of JSON). Pieces of a megabyte cost far more than
 * their size: strings and buffers that large skip V8's young generation and malloc's free lists, and
 * fresh pages are expensive on some VMs (measured: 9.3 ms per 1,000 line results in one piece against
 * 3.9 ms in pieces of 50). Corking sends each yield's pieces in one system call.
 */
const PIECE_ITEMS = 64;

const OutputSchema = z
  .union([MismatchResultSchema, ReflectionResultSchema, LineResultSchema, ReferResultSchema, MatchResultSchema])
  .meta({ description: 'The same body the single endpoint of `op` answers.' });

const BatchResultItemSchema = z
  .union([
    z.object({ ok: z.literal(true), output: OutputSchema }),
    z.object({ ok: z.literal(false), problem: ProblemSchema.meta({ description: 'What the single endpoint would have answered; fields are addressed from the request root (`items.3.input.loadOhm`).' }) }),
  ])
  .meta({ id: 'BatchResultItem' });

const BatchResponseSchema = z
  .object({ results: z.array(BatchResultItemSchema).meta({ description: 'One per item, in the order of the items.' }) })
  .meta({
    id: 'BatchResponse',
    example: {
      results: [
        { ok: true, output: { swr: 1.5, reflectionMagnitude: 0.2, returnLossDb: 13.979400086720377, mismatchLossDb: 0.17728766960431616, reflectedPowerRatio: 0.04, transmittedPowerRatio: 0.96 } },
        {
          ok: false,
          problem: {
            type: 'urn:gammaline:problem:unprocessable',
            title: 'The input cannot be computed',
            status: 422,
            detail: 'items.1.input.swr: Too small: expected number to be >=1',
            errors: [{ field: 'items.1.input.swr', message: 'Too small: expected number to be >=1' }],
          },
        },
      ],
    },
  });

const NdjsonResultLineSchema = z
  .union([
    z.object({ line: z.number().int(), ok: z.literal(true), output: OutputSchema }),
    z.object({ line: z.number().int(), ok: z.literal(false), problem: ProblemSchema }),
    z.object({
      end: z.enum(['complete', 'stopped']),
      problem: ProblemSchema.optional().meta({ description: 'Why the stream stopped early (429 when the quota ran out; 413 or 400 when a compressed body decoded beyond its limit or was corrupt).' }),
      nextLine: z.number().int().optional().meta({ description: 'First input line that was not computed; send the job again from there.' }),
      summary: z.object({ items: z.number().int(), succeeded: z.number().int(), failed: z.number().int(), unitsCharged: z.number().int() }),
    }),
  ])
  .meta({
    id: 'BatchStreamLine',
    description: 'One line of the NDJSON answer: a result for input line `line`, or the closing line with `end`.',
    example: { line: 1, ok: true, output: { swr: 1.5, reflectionMagnitude: 0.2, returnLossDb: 13.979400086720377, mismatchLossDb: 0.17728766960431616, reflectedPowerRatio: 0.04, transmittedPowerRatio: 0.96 } },
  });

registry.registerPath({
  method: 'post',
  path: '/api/v1/batch',
  operationId: 'runBatch',
  tags: ['Batch'],
  summary: 'Many calculations in one request (JSON or streamed NDJSON)',
  description: [
    `**JSON** (\`application/json\`, body up to ${BATCH_JSON_LIMIT}): \`{ items: [{ op, input }] }\` with 1 to ${MAX_BATCH_ITEMS} items; \`op\` is \`mismatch\`, \`reflection\`, \`line\`, \`refer\` or \`match\` and \`input\` the body of that endpoint. `,
    'The answer has one result per item, in order: `{ ok: true, output }` or `{ ok: false, problem }`, the problem being what the single endpoint would have answered, with fields addressed from the request root (`items.3.input.loadOhm`). One bad item never fails the others. ',
    'Each item costs one calculation unit; a batch that does not fit the remaining daily quota is refused whole (429) before any work.\n\n',
    `**NDJSON** (\`${NDJSON_TYPE}\`, no size limit when plain): one item \`{ op, input }\` per line; the answer streams one line per non-blank input line, in order, \`{ line, ok, output | problem }\` (\`line\` = 1-based input line number), `,
    'computed and charged in blocks of ' + NDJSON_BLOCK_ITEMS + ' lines as they arrive, in constant memory and with back-pressure both ways: read the answer while you send (curl does; a client that sends everything before reading stalls once a few megabytes of answers wait). ',
    `A line that is not JSON, or longer than ${MAX_NDJSON_LINE_BYTES / 1024} KB, gets a problem line like a bad item and the stream goes on; every non-blank line costs one unit. `,
    'The last line is always `{ end: "complete", summary }`, or `{ end: "stopped", problem, nextLine, summary }` when the daily quota ran out (problem status 429; lines from `nextLine` on were not computed), a compressed body failed (see below) or the server could not go on; an answer without an `end` line was cut off. ',
    'When no quota is left at the start, the answer is a plain 429 problem.\n\n',
    `**Compressed bodies** (\`Content-Encoding\`, any case). NDJSON: \`gzip\` (or \`x-gzip\`) is decoded as it streams, with the same ${MAX_NDJSON_LINE_BYTES / 1024} KB line limit on the decoded lines, and a compressed body may decode to at most ${MAX_NDJSON_DECODED_BYTES / 1024 / 1024} MB: beyond that, or when the gzip data is corrupt or cut short, it is refused with 413 or 400 (a problem answer while the first block is read, before anything is charged; later, the \`end: "stopped"\` line with that problem and \`nextLine\`; lines read since the last computed one are neither computed nor charged). `,
    '`identity` or no header means plain; any other coding (`deflate`, `br`, `compress`, a list of codings) is refused with 415 naming the accepted ones, and `Accept-Encoding: gzip`, before anything is charged. ',
    `JSON: \`gzip\`, \`deflate\` and \`br\` are decoded and the ${BATCH_JSON_LIMIT} limit applies to the decoded body (413 beyond it, 400 for corrupt data); other codings answer 415.`,
  ].join(''),
  security: keyOrSession,
  request: {
    body: {
      required: true,
      content: {
        'application/json': { schema: BatchRequestSchema },
        [NDJSON_TYPE]: { schema: BatchItemSchema },
      },
    },
  },
  responses: {
    200: {
      description: 'Results in item order (JSON), or a stream of result lines ending with an `end` line (NDJSON).',
      headers: rateLimitHeaders,
      content: { 'application/json': { schema: BatchResponseSchema }, [NDJSON_TYPE]: { schema: NdjsonResultLineSchema } },
    },
    ...problemResponses.validation,
    ...problemResponses.tooLarge,
    415: { description: 'The body is neither JSON nor NDJSON, or comes in a content coding the route does not take.', content: { 'application/problem+json': { schema: ProblemSchema } } },
    ...meteredProblems,
  },
});

const onlyNdjson: RequestHandler = (req, _res, next) => {
  next(req.is(NDJSON_TYPE) ? undefined : 'route');
};

const batchJson = express.json({ limit: BATCH_JSON_LIMIT, type: ['application/json', 'application/*+json'] });

const envelope: RequestHandler = (req, res, next) => {
  if (!req.is('application/json') && !req.is('application/*+json')) {
    throw new ApiError('unsupportedMediaType', `Send the batch as JSON (Content-Type: application/json) or stream it as NDJSON (Content-Type: ${NDJSON_TYPE}).`);
  }
  const parsed = BatchEnvelopeSchema.safeParse(req.body ?? {});
  if (!parsed.success) throw apiErrorFromZod(parsed.error, 'body', { schema: BatchEnvelopeSchema, input: req.body ?? {} });
  keepValidatedBody(res, BatchEnvelopeSchema, parsed.data);
  next();
};

const yieldToEventLoop = () => new Promise<void>((resolve) => setImmediate(resolve));


/** POST /api/v1/batch: JSON batches and NDJSON streams. */
export function batchRouter(ctx: AppContext): Router {
  const router = Router();
  const caller = requireCaller(ctx);

  router.post('/batch', onlyNdjson, caller, readFirstBlock(ctx), meterCalculation(ctx, 'batch', (_req, res) => res.locals.ndjson?.firstGranted ?? 1), streamResults(ctx));

  router.post(
    '/batch',
    caller,
    batchJson,
    envelope,
    meterCalculation(ctx, 'batch', (_req, res) => input(res, BatchEnvelopeSchema).items.length),
    async (req, res) => {
      const { items } = input(res, BatchEnvelopeSchema);
      const cables = await cableLookupFor(ctx.database.db, callerOf(res).organisationId, cableIdsIn(items));
      // Every item is answered (runItem turns its failures into problems), so the 200 is certain here:
      // results go out block by block while the next block is computed, never built as one string
      // (a 10,000-item line batch answers about 8 MB).
      res.status(200).type('application/json');
      res.cork();
      let piece = '{"results":[';
      for (let i = 0; i < items.length; i++) {
        if (i > 0 && i % PIECE_ITEMS === 0) {
          res.write(piece);
          piece = '';
        }
        if (i > 0 && i % YIELD_EVERY === 0) {
          // Not waiting for the socket to drain: the answer is bounded by the batch limit, and a slow
          // reader must not keep the computation (and the request's items) waiting.
          res.uncork();
          await yieldToEventLoop();
          if (res.destroyed) return; // the client went away: stop computing for nobody
          res.cork();
        }
        const outcome: ItemOutcome = runItem(items[i], `items.${i}`, cables, req.log);
        piece += (i === 0 ? '' : ',') + JSON.stringify(outcome);
      }
      // end() sends what is corked too; a batch that fits one piece keeps its Content-Length.
      res.end(`${piece}]}`);
    },
  );

  return router;
}
