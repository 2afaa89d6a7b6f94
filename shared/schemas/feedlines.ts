import { z } from 'zod';
import { FrequencyHz, ImpedanceSchema, PowerW } from './common.ts';
import { LineResultSchema, LineSpecSchema, ReadingSchema, ReferResultSchema } from './calc.ts';

/** Most sections one feed line may have; a station run has a handful. */
export const MAX_FEEDLINE_SECTIONS = 32;

const LINE_FIELDS = Object.keys(LineSpecSchema.shape) as (keyof typeof LineSpecSchema.shape)[];

/**
 * One section of a feed line: a length of cable in any `LineSpec` form, or a connector/adapter as a
 * fixed insertion loss. The connector form is recognised by `insertionLossDb`.
 */
export const FeedlineSectionSchema = z
  .strictObject({
    ...LineSpecSchema.shape,
    insertionLossDb: z.number().min(0).max(60).optional().meta({ description: 'Connector or adapter: its matched insertion loss in dB (no length, no phase).', example: 0.1 }),
    label: z.string().trim().min(1).max(100).optional().meta({ description: 'What the section is, e.g. "N bulkhead at the hut wall". Required for a connector.', example: 'N bulkhead at the hut wall' }),
  })
  .superRefine((v, ctx) => {
    if (v.insertionLossDb !== undefined) {
      for (const field of LINE_FIELDS) {
        if (field === 'impedanceOhm' || field === 'maxVoltageRmsV') continue;
        if (v[field] !== undefined) {
          ctx.addIssue({ code: 'custom', path: [field], message: `a connector section has insertionLossDb, label and optionally impedanceOhm and maxVoltageRmsV only; put ${field} in a cable section of its own` });
        }
      }
      if (v.label === undefined) ctx.addIssue({ code: 'custom', path: ['label'], message: 'name the connector or adapter in label, e.g. "PL-259 to N adapter"' });
      return;
    }
    const { label: _label, insertionLossDb: _loss, ...line } = v;
    const parsed = LineSpecSchema.safeParse(line);
    if (!parsed.success) for (const issue of parsed.error.issues) ctx.addIssue({ code: 'custom', path: issue.path, message: issue.message });
  })
  .meta({
    id: 'FeedlineSection',
    description:
      'One section, listed from the transmitter end. A cable: `{ cableId, lengthM | lengthFt }`, `{ impedanceOhm, velocityFactor, lossDbPer100m | lossDbPer100ft, lengthM | lengthFt }` or `{ rlgc, lengthM | lengthFt }`, each with an optional `label`. ' +
      'A connector or adapter: `{ insertionLossDb, label }` (a matched loss with no length; its impedance defaults to the nearest cable section\'s Z0, or give `impedanceOhm`). Any section may give `maxVoltageRmsV`, its voltage rating: with `powerW`, a computed voltage above it adds a caution.',
    example: { cableId: 'rg-213', lengthM: 28, label: 'Hut to mast foot' },
  });

export type FeedlineSection = z.infer<typeof FeedlineSectionSchema>;

/** True for the connector form of a section. */
export function isConnectorSection(section: FeedlineSection): section is FeedlineSection & { insertionLossDb: number; label: string } {
  return section.insertionLossDb !== undefined;
}

const SectionsSchema = z
  .array(FeedlineSectionSchema)
  .min(1)
  .max(MAX_FEEDLINE_SECTIONS)
  .superRefine((sections, ctx) => {
    if (sections.every((s) => s.insertionLossDb !== undefined)) {
      ctx.addIssue({ code: 'custom', path: [], message: 'a feed line needs at least one cable section besides its connectors' });
    }
  })
  .meta({ description: `Sections from the transmitter end to the antenna (1 to ${MAX_FEEDLINE_SECTIONS}).` });

const FEEDLINE_EXAMPLE = {
  name: 'Hut to mast, 40 m dipole',
  notes: 'Rebuilt after the autumn storm.',
  sections: [
    { cableId: 'rg-213', lengthM: 28, label: 'Hut to mast foot' },
    { insertionLossDb: 0.15, label: 'N barrel at the mast foot' },
    { cableId: 'rg-8x', lengthM: 12, label: 'Up the mast' },
  ],
};

export const CreateFeedlineSchema = z
  .strictObject({
    name: z.string().trim().min(1).max(120).meta({ example: 'Hut to mast, 40 m dipole' }),
    notes: z.string().max(2000).default('').meta({ description: 'Free text.' }),
    sections: SectionsSchema,
  })
  .meta({ id: 'CreateFeedline', description: 'A named feed line. Cable ids may be catalog or account cables (GET /api/v1/cables).', example: FEEDLINE_EXAMPLE });

export const UpdateFeedlineSchema = z
  .strictObject({
    name: z.string().trim().min(1).max(120).optional(),
    notes: z.string().max(2000).optional(),
    sections: SectionsSchema.optional().meta({ description: 'Replaces all sections.' }),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'send at least one of name, notes, sections' })
  .meta({ id: 'UpdateFeedline', example: { name: 'Hut to mast (new N connectors)' } });

export const FeedlineSchema = z
  .object({
    id: z.uuid(),
    name: z.string(),
    notes: z.string(),
    sections: z.array(FeedlineSectionSchema),
    lengthM: z.number().meta({ description: 'Total physical length of the cable sections in metres.' }),
    createdAt: z.string(),
    updatedAt: z.string(),
  })
  .meta({ id: 'Feedline', example: { id: '5b0f6c52-0d8e-4f7e-9d51-1c6b8a3e2f10', ...FEEDLINE_EXAMPLE, lengthM: 40, createdAt: '2026-03-14T09:30:00.000Z', updatedAt: '2026-03-14T09:30:00.000Z' } });

export const FeedlineListSchema = z.object({ feedlines: z.array(FeedlineSchema) }).meta({ id: 'FeedlineList' });

export const FeedlineIdParamsSchema = z.object({ id: z.uuid({ message: 'feed line ids are UUIDs, as listed by GET /api/v1/feedlines' }) });

export const FeedlineLineRequestSchema = z
  .strictObject({
    frequencyHz: FrequencyHz,
    loadOhm: ImpedanceSchema.meta({ description: 'Load impedance at the antenna end, ohms.' }),
    powerW: PowerW.optional().meta({ description: 'Net power into the transmitter end (W). Adds `power` and `peaks`.' }),
  })
  .meta({ id: 'FeedlineLineRequest', example: { frequencyHz: 7_100_000, loadOhm: { re: 62, im: -14 }, powerW: 100 } });

export const FeedlineLineResultSchema = LineResultSchema.extend({
  sections: z.array(LineResultSchema).meta({ description: 'Each section on its own, from the transmitter end; a section\'s load is the next one\'s input.' }),
}).meta({ id: 'FeedlineLineResult', description: 'The whole feed line (totals end to end) and each section.' });

export const FeedlineReferRequestSchema = z
  .strictObject({
    frequencyHz: FrequencyHz,
    direction: z.enum(['sourceToLoad', 'loadToSource']).meta({ description: '`sourceToLoad`: the reading was taken at the transmitter; `loadToSource`: at the antenna.' }),
    reading: ReadingSchema,
  })
  .meta({ id: 'FeedlineReferRequest', example: { frequencyHz: 7_100_000, direction: 'sourceToLoad', reading: { forwardPowerW: 100, reflectedPowerW: 6 } } });

export const FeedlineReferResultSchema = ReferResultSchema.extend({
  sectionsMatchedLossDb: z.array(z.number()).meta({ description: 'Matched loss of each section at the frequency, from the transmitter end; they add up to `matchedLossDb`.' }),
}).meta({ id: 'FeedlineReferResult' });
