import { z } from '../../../zod.ts';

const Day = z.iso.date({ message: 'use a UTC date such as 2026-03-14' });

export const UsageQuerySchema = z.strictObject({
  from: Day.optional().openapi({ description: 'First UTC day (default: 29 days before `to`).', example: '2026-03-01' }),
  to: Day.optional().openapi({ description: 'Last UTC day, inclusive (default: today).', example: '2026-03-14' }),
  userId: z.uuid().optional().openapi({ description: 'Only this member (admins; others always see their own).' }),
  keyId: z.uuid().optional().openapi({ description: 'Only this key.' }),
});

const Counts = { units: z.number().int().openapi({ example: 420 }), requests: z.number().int().openapi({ example: 400 }) };

export const UsageSchema = z
  .object({
    scope: z.enum(['own', 'organisation']).openapi({ description: '`own`: your keys and console calls; `organisation`: every member (admins).', example: 'own' }),
    from: z.string().openapi({ example: '2026-03-01' }),
    to: z.string().openapi({ example: '2026-03-14' }),
    totalUnits: z.number().int().openapi({ example: 1234 }),
    totalRequests: z.number().int().openapi({ example: 1200 }),
    days: z.array(z.object({ day: z.string().openapi({ example: '2026-03-14' }), ...Counts })).openapi({ description: 'One entry per UTC day in the range, zeros included.' }),
    byEndpoint: z.array(
      z.object({
        endpoint: z.string().openapi({
          description: 'What was charged: a calculation by its name (`mismatch`, `reflection`, `line`, `refer`, `match`, as in its path and batch op), `batch`, `cableAttenuation`, `feedlineLine`, `feedlineRefer` or `sweeps`.',
          example: 'mismatch',
        }),
        ...Counts,
      }),
    ),
    byKey: z
      .array(
        z.object({
          keyId: z.uuid().nullable().openapi({ description: 'null: calls made from the console with a session.' }),
          keyName: z.string().nullable().openapi({ example: 'Shack logger' }),
          displayStart: z.string().nullable().openapi({ example: 'gml_Xq3v9A' }),
          userId: z.uuid(),
          ...Counts,
        }),
      )
      .openapi({ description: 'Per key, and one entry per member for console calls.' }),
    dailyByEndpoint: z
      .array(z.object({ endpoint: z.string().openapi({ example: 'line' }), units: z.array(z.number().int()) }))
      .openapi({ description: 'Units per day for each endpoint; `units[i]` belongs to `days[i]`.' }),
    dailyByKey: z
      .array(
        z.object({
          keyId: z.uuid().nullable().openapi({ description: 'null: console calls of `userId`.' }),
          userId: z.uuid(),
          units: z.array(z.number().int()),
        }),
      )
      .openapi({ description: 'Units per day for each key (and each member\'s console calls); `units[i]` belongs to `days[i]`.' }),
  })
  .openapi('Usage');

export type UsageQuery = z.infer<typeof UsageQuerySchema>;
export type Usage = z.infer<typeof UsageSchema>;
