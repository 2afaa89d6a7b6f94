import type { z } from 'zod';
import { assertCablesKnown } from '../../../../shared/calculations/feedlines.ts';
import { sectionModels } from '../../../../shared/calculations/line-models.ts';
import { referThroughModels, type ReferReading } from '../../../../shared/calculations/referral.ts';
import { cascadeLines } from '../../../../shared/rf/line.ts';
import { toComplex } from '../../../../shared/schemas/common.ts';
import type {
  FeedlineLineRequestSchema,
  FeedlineLineResultSchema,
  FeedlineReferRequestSchema,
  FeedlineReferResultSchema,
  FeedlineSection,
} from '../../../../shared/schemas/feedlines.ts';
import type { Db } from '../../../db/client.ts';
import { cableIdsIn, cableLookupFor } from '../cables/cable-lookup.ts';

/** Refuses sections naming a cable that is neither in the catalog nor among the organisation's cables. */
export async function assertFeedlineCablesKnown(db: Db, organisationId: string, sections: readonly FeedlineSection[]): Promise<void> {
  assertCablesKnown(sections, await cableLookupFor(db, organisationId, cableIdsIn(sections)));
}

/** A load carried through the sections of a saved feed line, as POST /api/v1/line does through sections. */
export async function transformThroughFeedline(
  db: Db,
  organisationId: string,
  sections: readonly FeedlineSection[],
  request: z.output<typeof FeedlineLineRequestSchema>,
): Promise<z.input<typeof FeedlineLineResultSchema>> {
  const cables = await cableLookupFor(db, organisationId, cableIdsIn(sections));
  return cascadeLines(sectionModels(sections, request.frequencyHz, cables), toComplex(request.loadOhm), request.frequencyHz, request.powerW);
}

/** A reading referred between the two ends of a saved feed line, through the matched loss of its sections. */
export async function referThroughFeedline(
  db: Db,
  organisationId: string,
  sections: readonly FeedlineSection[],
  request: z.output<typeof FeedlineReferRequestSchema>,
): Promise<z.input<typeof FeedlineReferResultSchema>> {
  const cables = await cableLookupFor(db, organisationId, cableIdsIn(sections));
  return referThroughModels(sectionModels(sections, request.frequencyHz, cables), request.direction, request.reading as ReferReading);
}
