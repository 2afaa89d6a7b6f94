import { findCable, type CableType } from '../rf/cables.ts';

/**
 * Where a calculation looks up the cables a request names by `cableId`: the built-in catalog, and
 * on the server also the organisation's own cables (server/api/v1/cables/cable-lookup.ts).
 */
export interface CableLookup {
  findCable: (id: string) => CableType | undefined;
}

/** The built-in catalog alone: what a calculation sees when the request names no account cable. */
export const catalogOnly: CableLookup = { findCable };
