import { z } from 'zod';
import { CALCULATION_NAMES, CALCULATIONS, type Calculation } from '../calculations/table.ts';

/** Most items one JSON batch may hold; bigger jobs stream as NDJSON. */
export const MAX_BATCH_ITEMS = 20_000;

type Calculations = typeof CALCULATIONS;

/** One `{ op, input }` object schema per calculation, in table order. */
type ItemOptions<T extends readonly Calculation[]> = {
  -readonly [K in keyof T]: T[K] extends Calculation<infer Name, infer Request> ? z.ZodObject<{ op: z.ZodLiteral<Name>; input: Request }, z.core.$strict> : never;
};
type BatchItemOptions = ItemOptions<Calculations>;

const itemOptions = CALCULATIONS.map((c) => z.strictObject({ op: z.literal(c.name), input: c.request })) as unknown as BatchItemOptions;

const [firstOp, ...otherOps] = CALCULATION_NAMES;

/** For the OpenAPI document: each `op` with the body of its single endpoint, one per entry of the calculations table. */
export const BatchItemSchema = z.discriminatedUnion('op', itemOptions).meta({
  id: 'BatchItem',
  description: `One calculation: \`op\` is the calculation's name as in its path (\`${firstOp}\` = POST /api/v1/${firstOp}, ${otherOps.map((op) => `\`${op}\``).join(', ')}) and \`input\` is the body that endpoint takes.`,
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
