import { M_PER_FT } from '../rf/constants.ts';
import { RfInputError } from '../rf/errors.ts';
import { isConnectorSection, type FeedlineSection } from '../schemas/feedlines.ts';
import type { CableLookup } from './cable-lookup.ts';

/** Physical length of the cable sections in metres. */
export function feedlineLengthM(sections: readonly FeedlineSection[]): number {
  let total = 0;
  for (const s of sections) if (!isConnectorSection(s)) total += s.lengthM ?? (s.lengthFt ?? 0) * M_PER_FT;
  return total;
}

/** Refuses cable ids that are neither in the catalog nor among the organisation's cables. */
export function assertCablesKnown(sections: readonly FeedlineSection[], cables: CableLookup, field = 'sections'): void {
  sections.forEach((s, i) => {
    if (s.cableId !== undefined && !cables.findCable(s.cableId)) {
      throw new RfInputError(`${field}.${i}.cableId`, `unknown cable '${s.cableId}'; GET /api/v1/cables lists the catalog and your organisation's cables`);
    }
  });
}
