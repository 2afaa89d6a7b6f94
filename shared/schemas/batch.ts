import { z } from 'zod';
import { LineRequestSchema, MatchRequestSchema, MismatchRequestSchema, ReferRequestSchema, ReflectionRequestSchema } from './calc.ts';
import { FaultDistanceRequestSchema } from './fault.ts';

/** Most items one JSON batch may hold; bigger jobs stream as NDJSON. */
export const MAX_BATCH_ITEMS = 20_000;

/** The calculations a batch item may name, with the request body each takes. */
export const BATCH_OPERATIONS = ['mismatch', 'reflection', 'line', 'refer', 'match', 'fault-distance'] as const;
export type BatchOperation = (typeof BATCH_OPERATIONS)[number];

/** For the OpenAPI document: each `op` with the body of its single endpoint. */
export const BatchItemSchema = z
  .discriminatedUnion('op', [
    z.strictObject({ op: z.literal('mismatch'), input: MismatchRequestSchema }),
    z.strictObject({ op: z.literal('reflection'), input: ReflectionRequestSchema }),
    z.strictObject({ op: z.literal('line'), input: LineRequestSchema }),
    z.strictObject({ op: z.literal('refer'), input: ReferRequestSchema }),
    z.strictObject({ op: z.literal('match'), input: MatchRequestSchema }),
    z.strictObject({ op: z.literal('fault-distance'), input: FaultDistanceRequestSchema }),
  ])
  .meta({
    id: 'BatchItem',
    description: 'One calculation: `op` is the calculation\'s name as in its path (`mismatch` = POST /api/v1/mismatch, `reflection`, `line`, `refer`, `match`, `fault-distance`) and `input` is the body that endpoint takes.',
    example: { op: 'mismatch', input: { swr: 1.5 } },
  });

const itemsMessage = {
  min: 'send at least one item',
  max: `at most ${MAX_BATCH_ITEMS} items per request; split the job or stream it as NDJSON (Content-Type: application/x-ndjson)`,
};

/**
 * The envelope the endpoint validates. Items are checked one by one after this (a bad item gets its
 * own problem and never fails the others), so here they only have to exist.
 */
export const BatchEnvelopeSchema = z.strictObject({
  items: z.array(z.unknown()).min(1, { message: itemsMessage.min }).max(MAX_BATCH_ITEMS, { message: itemsMessage.max }),
});

/** The documented request body: the envelope with its items spelled out. */
export const BatchRequestSchema = z
  .strictObject({
    items: z.array(BatchItemSchema).min(1).max(MAX_BATCH_ITEMS).meta({ description: `1 to ${MAX_BATCH_ITEMS} items, answered in the same order.` }),
  })
  .meta({
    id: 'BatchRequest',
    example: {
      items: [
        { op: 'mismatch', input: { forwardPowerW: 100, reflectedPowerW: 4 } },
        { op: 'line', input: { frequencyHz: 14_200_000, line: { cableId: 'rg-213', lengthM: 30 }, loadOhm: { re: 72, im: 18 } } },
        { op: 'refer', input: { matchedLossDb: 1.2, direction: 'inputToLoad', reading: { swr: 1.8 } } },
      ],
    },
  });
