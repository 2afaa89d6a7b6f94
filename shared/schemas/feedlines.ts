import { z } from 'zod';
import { FrequencyHz, ImpedanceSchema, PowerW } from './common.ts';
import { FeedlineSectionSchema, LineSectionsSchema, ReadingSchema, ReferResultSchema } from './calculations.ts';

// Sections are described in calculations.ts, beside LineSpec: POST /line and /refer take them inline too.
export { FeedlineLineResultSchema, FeedlineSectionSchema, isConnectorSection, MAX_FEEDLINE_SECTIONS, type FeedlineSection } from './calculations.ts';

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
    sections: LineSectionsSchema,
  })
  .meta({ id: 'CreateFeedline', description: 'A named feed line. Cable ids may be catalog or account cables (GET /api/v1/cables).', example: FEEDLINE_EXAMPLE });

export const UpdateFeedlineSchema = z
  .strictObject({
    name: z.string().trim().min(1).max(120).optional(),
    notes: z.string().max(2000).optional(),
    sections: LineSectionsSchema.optional().meta({ description: 'Replaces all sections.' }),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'send at least one of name, notes, sections', params: { shape: true } })
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

export const FeedlineReferRequestSchema = z
  .strictObject({
    frequencyHz: FrequencyHz,
    direction: z.enum(['inputToLoad', 'loadToInput']).meta({ description: '`inputToLoad`: the reading was taken at the transmitter; `loadToInput`: at the antenna.' }),
    reading: ReadingSchema,
  })
  .meta({ id: 'FeedlineReferRequest', example: { frequencyHz: 7_100_000, direction: 'inputToLoad', reading: { forwardPowerW: 100, reflectedPowerW: 6 } } });

export const FeedlineReferResultSchema = ReferResultSchema.extend({
  sectionsMatchedLossDb: z.array(z.number()).meta({ description: 'Matched loss of each section at the frequency, from the transmitter end; they add up to `matchedLossDb`.' }),
}).meta({ id: 'FeedlineReferResult' });
