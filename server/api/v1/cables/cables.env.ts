import { CABLE_CATALOG, findCable } from '../../../../shared/rf/cables.ts';
import type { Db } from '../../../db/client.ts';
import { catalogOnly, type CalculationEnv } from '../calc/operations.ts';
import { findAccountCables } from './cables.repository.ts';

const CATALOG_IDS = new Set(CABLE_CATALOG.map((c) => c.id));

/**
 * Every `cableId` string anywhere in a request value (single bodies, batch blocks, feed line
 * sections). Only ids outside the catalog need a database look-up.
 */
export function cableIdsIn(value: unknown, into: Set<string> = new Set()): Set<string> {
  const stack: unknown[] = [value];
  while (stack.length > 0) {
    const v = stack.pop();
    if (Array.isArray(v)) {
      for (const x of v) if (x !== null && typeof x === 'object') stack.push(x);
    } else if (v !== null && typeof v === 'object') {
      for (const [k, x] of Object.entries(v)) {
        if (k === 'cableId' && typeof x === 'string') into.add(x);
        else if (x !== null && typeof x === 'object') stack.push(x);
      }
    }
  }
  return into;
}

/**
 * The cables a request of an organisation may use: the catalog plus those of its account cables
 * the request names. Requests that name only catalog cables cost no query.
 */
export async function calculationEnvFor(db: Db, organisationId: string, cableIds: Iterable<string>): Promise<CalculationEnv> {
  const wanted = [...cableIds].filter((id) => !CATALOG_IDS.has(id));
  if (wanted.length === 0) return catalogOnly;
  const found = await findAccountCables(db, organisationId, wanted);
  if (found.length === 0) return catalogOnly;
  const byId = new Map(found.map((c) => [c.id, c]));
  return { findCable: (id) => findCable(id) ?? byId.get(id) };
}
