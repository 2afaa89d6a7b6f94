import { z } from 'zod';
import { ComplexSchema, ImpedanceSchema, ReflectionDetailSchema, ReturnLossOutput, SwrOutput } from './common.ts';
import { FeedlineSectionSchema, LineOrSectionsSchema } from './calculations.ts';
import { shapeIssue } from './issues.ts';

/** Most points a JSON upload may carry (the body limit allows about this many); larger sweeps go up as files. */
export const MAX_JSON_SWEEP_POINTS = 20_000;

export const SweepDirectionSchema = z
  .enum(['inputToLoad', 'loadToInput'])
  .meta({
    id: 'SweepDirection',
    description: '`inputToLoad`: the sweep was measured at the transmitter end; it is moved to the antenna. `loadToInput`: measured at the antenna; the result is what the transmitter end sees.',
    example: 'inputToLoad',
  });

export const SweepMaskSchema = z
  .strictObject({
    maxSwr: z.number().min(1).optional().meta({ description: 'Pass when SWR stays at or under this everywhere in the range.', example: 1.5 }),
    minReturnLossDb: z.number().min(0).optional().meta({ description: 'Pass when return loss stays at or above this everywhere in the range.' }),
    startHz: z.number().min(0).optional().meta({ description: 'Start of the range (default: the first point).', example: 7_000_000 }),
    stopHz: z.number().min(0).optional().meta({ description: 'End of the range (default: the last point).', example: 7_200_000 }),
  })
  .superRefine((m, ctx) => {
    const both = m.maxSwr !== undefined && m.minReturnLossDb !== undefined;
    if (both) shapeIssue(ctx, ['minReturnLossDb'], 'give maxSwr or minReturnLossDb, not both');
    if (m.maxSwr === undefined && m.minReturnLossDb === undefined) shapeIssue(ctx, [], 'the mask needs maxSwr or minReturnLossDb');
    if (m.startHz !== undefined && m.stopHz !== undefined && m.stopHz < m.startHz) ctx.addIssue({ code: 'custom', path: ['stopHz'], message: 'stopHz is below startHz; give the range from low to high' });
  })
  .meta({ id: 'SweepMask', description: 'An acceptance figure over a frequency range: `{ maxSwr }` or `{ minReturnLossDb }`, optionally with `startHz`/`stopHz`.', example: { maxSwr: 1.5, startHz: 7_000_000, stopHz: 7_200_000 } });

export const SweepLineSchema = LineOrSectionsSchema.meta({ id: 'SweepLine', description: 'One `LineSpec`, or feed line sections from the transmitter end (cables and connectors, as in a saved feed line).', example: { cableId: 'rg-213', lengthM: 28 } });

/** Analysis parameters, the same in a JSON upload and as multipart form fields. */
export const sweepOptionFields = {
  name: z.string().trim().min(1).max(120).optional().meta({ description: 'Name shown in lists. Default: the file name, or "Sweep" for JSON points.', example: 'Ridge dipole after retune' }),
  referenceOhm: z.number().positive().max(1e6).optional().meta({ description: 'Real reference resistance SWR is read against. Default: the Touchstone file\'s `R`, else 50. CSV s11 columns are read against it too.', example: 50 }),
  thresholdSwr: z.number().gt(1).max(100).optional().meta({ description: 'Bands are where SWR stays under this. Default 2 (common practice).', example: 2 }),
  line: SweepLineSchema.optional(),
  feedlineId: z.uuid({ message: 'feedlineId is the UUID of a saved feed line (GET /api/v1/feedlines)' }).optional().meta({ description: 'A saved feed line to move the sweep through, instead of `line`.' }),
  direction: SweepDirectionSchema.optional().meta({ description: 'Required with `line` or `feedlineId`.' }),
  mask: SweepMaskSchema.optional(),
};

/** What may change on a stored sweep: the figures its points are judged by (the points never change). */
export const UpdateSweepSchema = z
  .strictObject({
    thresholdSwr: sweepOptionFields.thresholdSwr,
    mask: SweepMaskSchema.nullable().optional().meta({ description: 'A new acceptance figure over a frequency range; `null` removes it.' }),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'send thresholdSwr, mask or both', params: { shape: true } })
  .meta({ id: 'UpdateSweep', description: 'The bands and the verdict are worked out again from the stored points.', example: { mask: { maxSwr: 1.5, startHz: 7_050_000, stopHz: 7_150_000 } } });

type SweepOptionValues = { line?: unknown; feedlineId?: unknown; direction?: unknown };

/** The rules that tie the option fields together, shared by the JSON and multipart forms. */
export function checkSweepOptions(v: SweepOptionValues, ctx: z.RefinementCtx): void {
  if (v.line !== undefined && v.feedlineId !== undefined) shapeIssue(ctx, ['feedlineId'], 'give line or feedlineId, not both');
  const moved = v.line !== undefined || v.feedlineId !== undefined;
  if (moved && v.direction === undefined) {
    shapeIssue(ctx, ['direction'], 'say where the sweep was measured: "inputToLoad" (at the transmitter end) or "loadToInput" (at the antenna)');
  }
  if (!moved && v.direction !== undefined) shapeIssue(ctx, ['direction'], 'direction needs a line or feedlineId to move the sweep through');
}

export const SweepPointInputSchema = z
  .strictObject({
    frequencyHz: z.number().min(0).meta({ example: 7_100_000 }),
    loadOhm: ImpedanceSchema.nullable().optional().meta({ description: 'Measured impedance; `null` for an open circuit.' }),
    reflection: ComplexSchema.optional().meta({ description: 'Measured Γ against `referenceOhm`, instead of `loadOhm`.' }),
  })
  .superRefine((p, ctx) => {
    if ((p.loadOhm === undefined) === (p.reflection === undefined)) shapeIssue(ctx, ['loadOhm'], 'give loadOhm or reflection for each point (one of them)');
  })
  .meta({ id: 'SweepPointInput', example: { frequencyHz: 7_100_000, loadOhm: { re: 52.3, im: -4.1 } } });

export type SweepPointInput = z.infer<typeof SweepPointInputSchema>;

export const CreateSweepJsonSchema = z
  .strictObject({
    ...sweepOptionFields,
    points: z.array(SweepPointInputSchema).min(1).max(MAX_JSON_SWEEP_POINTS).meta({ description: `Points by strictly increasing frequency (1 to ${MAX_JSON_SWEEP_POINTS}).` }),
  })
  .superRefine(checkSweepOptions)
  .meta({
    id: 'CreateSweepJson',
    description: 'A sweep as JSON points. Files (Touchstone, CSV) go up as multipart/form-data instead.',
    example: {
      name: 'Ridge dipole, three points',
      referenceOhm: 50,
      points: [
        { frequencyHz: 7_000_000, loadOhm: { re: 41.2, im: -22.5 } },
        { frequencyHz: 7_100_000, loadOhm: { re: 50.4, im: 1.2 } },
        { frequencyHz: 7_200_000, loadOhm: { re: 61.8, im: 24.9 } },
      ],
      mask: { maxSwr: 1.5, startHz: 7_050_000, stopHz: 7_150_000 },
    },
  });

export type CreateSweepJson = z.infer<typeof CreateSweepJsonSchema>;
export type SweepOptions = Omit<CreateSweepJson, 'points'>;

export const SweepMultipartSchema = z
  .object({
    file: z.string().meta({ format: 'binary', description: 'A Touchstone one-port file (`.s1p`, version 1 or 2) or a CSV with `frequency_hz, r_ohm, x_ohm` or `frequency_hz, s11_re, s11_im` columns.' }),
    format: z.enum(['touchstone', 'csv']).optional().meta({ description: 'How to read the file. Default: from the file name (`.s1p`/`.ts` → Touchstone, `.csv` → CSV), else from its first line.' }),
    name: z.string().optional(),
    referenceOhm: z.string().optional().meta({ description: 'A number, e.g. `50`.' }),
    thresholdSwr: z.string().optional().meta({ description: 'A number, e.g. `2`.' }),
    line: z.string().optional().meta({ description: 'JSON of a `SweepLine`, e.g. `{"cableId":"rg-213","lengthM":28}`.' }),
    feedlineId: z.string().optional(),
    direction: z.string().optional().meta({ description: '`inputToLoad` or `loadToInput`.' }),
    mask: z.string().optional().meta({ description: 'JSON of a `SweepMask`, e.g. `{"maxSwr":1.5}`.' }),
  })
  .meta({ id: 'CreateSweepMultipart', description: 'Multipart form: the file in field `file`, the options as text fields (JSON text for `line` and `mask`).' });

export const AnalysedPointSchema = z
  .object({
    frequencyHz: z.number(),
    loadOhm: ComplexSchema.nullable().meta({ description: 'Impedance (after the move, when a line was given); `null` for an open circuit.' }),
    reflection: ReflectionDetailSchema.meta({ description: 'Γ against `referenceOhm`.' }),
    swr: SwrOutput.meta({ description: 'Standing-wave ratio; `null` where |Γ| ≥ 1: total reflection, or a measured |Γ| above 1 (calibration error on a near-open or near-short), kept as measured rather than clamped.' }),
    returnLossDb: ReturnLossOutput.meta({ description: 'Return loss in dB; `null` for a perfect match (Γ = 0); negative where a measured |Γ| is above 1.' }),
  })
  .meta({ id: 'AnalysedPoint' });

export const SweepSummarySchema = z
  .object({
    minSwr: z.number().nullable().meta({ description: 'Lowest SWR of any point; `null` when every point reflects totally.' }),
    minSwrFrequencyHz: z.number().nullable(),
    thresholdSwr: z.number(),
    bands: z.array(z.object({ startHz: z.number(), stopHz: z.number() })).meta({ description: 'Every range where SWR stays under the threshold; edges linearly interpolated.' }),
    resonancesHz: z.array(z.number()).meta({ description: 'Where the reactance changes sign.' }),
    pointCount: z.number().int(),
    startHz: z.number(),
    stopHz: z.number(),
  })
  .meta({ id: 'SweepSummary', example: { minSwr: 1.04, minSwrFrequencyHz: 7_105_000, thresholdSwr: 2, bands: [{ startHz: 6_930_000, stopHz: 7_290_000 }], resonancesHz: [7_104_300], pointCount: 201, startHz: 6_800_000, stopHz: 7_400_000 } });

export const SweepVerdictSchema = z
  .object({
    pass: z.boolean(),
    worst: z.object({ frequencyHz: z.number(), swr: SwrOutput, returnLossDb: ReturnLossOutput }).meta({ description: 'The point in the range with the largest |Γ|.' }),
    mask: z.object({ maxSwr: z.number().optional(), minReturnLossDb: z.number().optional(), startHz: z.number(), stopHz: z.number() }).meta({ description: 'The mask with its range filled in.' }),
  })
  .meta({ id: 'SweepVerdict', description: 'Pass or fail against the mask.' });

const sweepHeaderFields = {
  id: z.uuid(),
  name: z.string(),
  sourceFormat: z.enum(['touchstone', 'csv', 'json']),
  fileName: z.string().nullable(),
  referenceOhm: z.number(),
  thresholdSwr: z.number(),
  direction: SweepDirectionSchema.nullable().meta({ description: 'How the sweep was moved; `null` when it was not.' }),
  feedline: z.object({ id: z.uuid(), name: z.string() }).nullable().meta({ description: 'The saved feed line it was moved through, while that feed line exists.' }),
  mask: SweepMaskSchema.nullable(),
  summary: SweepSummarySchema,
  verdict: SweepVerdictSchema.nullable(),
  createdAt: z.string(),
};

export const SweepListItemSchema = z.object(sweepHeaderFields).meta({ id: 'SweepListItem', description: 'A stored sweep without its points.' });

export const SweepListSchema = z.object({ sweeps: z.array(SweepListItemSchema).meta({ description: 'Newest first.' }) }).meta({ id: 'SweepList' });

/** Points of a page when `limit` is not given, and the most one page may hold. */
export const DEFAULT_SWEEP_POINTS_PAGE = 1000;
export const MAX_SWEEP_POINTS_PAGE = 2000;

const nextCursorField = z
  .string()
  .nullable()
  .meta({ description: 'Pass as `cursor` to GET /api/v1/sweeps/{id}/points for the next page; `null` after the last point. Opaque; it stays valid as long as the sweep exists (stored points never change).', example: 'cDEwMDA' });

export const SweepSchema = z
  .object({
    ...sweepHeaderFields,
    line: z.array(FeedlineSectionSchema).nullable().meta({ description: 'The sections the sweep was moved through, from the transmitter end, as they were at upload (the points were moved then; later changes to a feed line or cable do not alter them); `null` when not moved.' }),
    points: z
      .array(AnalysedPointSchema)
      .optional()
      .meta({ description: `The first page of analysed points (${DEFAULT_SWEEP_POINTS_PAGE} unless \`limit\` says otherwise; \`summary.pointCount\` is the total). Absent with \`fields=summary\`.` }),
    nextCursor: nextCursorField.optional().meta({ description: 'Where the next page starts (GET /api/v1/sweeps/{id}/points?cursor=…); `null` when the first page holds every point. Absent with `fields=summary`.' }),
  })
  .meta({ id: 'Sweep', description: 'A stored sweep: summary, verdict and the first page of analysed points.' });

export const SweepPointsPageSchema = z
  .object({
    points: z.array(AnalysedPointSchema).meta({ description: 'Analysed points by increasing frequency.' }),
    nextCursor: nextCursorField,
  })
  .meta({ id: 'SweepPointsPage', description: 'One page of a stored sweep\'s analysed points.' });

const pageLimit = z.coerce
  .number()
  .int()
  .min(1)
  .max(MAX_SWEEP_POINTS_PAGE)
  .optional()
  .meta({ description: `Points per page, 1 to ${MAX_SWEEP_POINTS_PAGE} (default ${DEFAULT_SWEEP_POINTS_PAGE}).`, example: DEFAULT_SWEEP_POINTS_PAGE });

export const SweepReadQuerySchema = z.strictObject({
  fields: z.enum(['summary']).optional().meta({ description: '`summary`: the sweep without points.' }),
  limit: pageLimit,
});

export const SweepPointsQuerySchema = z.strictObject({
  limit: pageLimit,
  cursor: z.string().max(64).optional().meta({ description: '`nextCursor` of the previous page; leave out for the first page.' }),
  format: z
    .enum(['json', 'csv', 'ndjson'])
    .optional()
    .meta({ description: 'Instead of `Accept`: `json` (one page), `csv` or `ndjson` (every point, streamed; `limit` and `cursor` do not apply).' }),
});

export const SweepIdParamsSchema = z.object({ id: z.uuid({ message: 'sweep ids are UUIDs, as listed by GET /api/v1/sweeps' }) });
