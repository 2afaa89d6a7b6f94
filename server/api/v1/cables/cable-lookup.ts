import { CABLE_CATALOG, findCable } from '../../../../shared/rf/cables.ts';
import type { Db } from '../../../db/client.ts';
import { catalogOnly, type CableLookup } from '../../../../shared/calculations/cable-lookup.ts';
import { findAccountCables } from './cables.repository.ts';

const CATALOG_IDS = new Set(CABLE_CATALOG.map((c) => c.id));

/**
 * Every `cableId` string anywhere in a request value (single bodies, batch blocks, feed line
 * sections). Only ids outside the catalog need a database look-up.
 */
export function cableIdsIn(value: unknown, into: Set<string> = new Set()): Set<string> {
  collectCableIds(value, into);
  return into;
}

// for…in without Object.entries: a batch of 10,000 items is walked without allocating per object.
function collectCableIds(v: unknown, into: Set<string>): void {
  if (v === null || typeof v !== 'object') return;
  if (Array.isArray(v)) {
    for (let i = 0; i < v.length; i++) collectCableIds(v[i], into);
    return;
  }
  const o = v as Record<string, unknown>;
  for (const k in o) {
    const x = o[k];
    if (k === 'cableId' && typeof x === 'string') into.add(x);
    else if (x !== null && typeof x === 'object') collectCableIds(x, into);
  }
}

/** The `cableId`s in a request value that are not catalog cables (account cables, or unknown ids). */
export function accountCableIdsIn(value: unknown): string[] {
  return notInCatalog(cableIdsIn(value));
}

function notInCatalog(ids: Iterable<string>): string[] {
  return [...ids].filter((id) => !CATALOG_IDS.has(id));
}

/**
 * The cables a request of an organisation may use: the catalog plus those of its account cables
 * the request names. Requests that name only catalog cables cost no query.
 */
export async function cableLookupFor(db: Db, organisationId: string, cableIds: Iterable<string>): Promise<CableLookup> {
  const wanted = notInCatalog(cableIds);
  if (wanted.length === 0) return catalogOnly;
  const found = await findAccountCables(db, organisationId, wanted);
  if (found.length === 0) return catalogOnly;
  const byId = new Map(found.map((c) => [c.id, c]));
  return { findCable: (id) => findCable(id) ?? byId.get(id) };
}
