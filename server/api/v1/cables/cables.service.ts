import type { Caller } from '../../../auth/caller.ts';
import type { Db } from '../../../db/client.ts';
import { ApiError } from '../../../http/problem.ts';
import { recordAudit } from '../audit/audit.repository.ts';
import { memberActor } from '../members/members.repository.ts';
import { deleteAccountCable, feedlinesUsingCable, insertAccountCable, updateAccountCable, type AccountCableValues, type WrittenCable } from './cables.repository.ts';

// Each change of an account cable and its audit entry are written in one transaction.

/** Adds a cable to the caller's organisation; undefined when it already has that id. */
export async function addAccountCable(db: Db, caller: Caller, cableId: string, values: AccountCableValues): Promise<WrittenCable | undefined> {
  const actor = await memberActor(db, caller);
  return db.transaction(async (tx) => {
    const row = await insertAccountCable(tx, { ...values, organisationId: caller.organisationId, cableId, createdBy: caller.userId });
    if (row) {
      await recordAudit(tx, { organisationId: caller.organisationId, actor, action: 'cable.added', targetType: 'cable', targetId: row.rowId, details: { cableId, designation: values.designation } });
    }
    return row;
  });
}

/** Changes an account cable; undefined when the organisation has no cable of that id. */
export async function changeAccountCable(db: Db, caller: Caller, cableId: string, change: Partial<AccountCableValues>): Promise<WrittenCable | undefined> {
  const actor = await memberActor(db, caller);
  return db.transaction(async (tx) => {
    const row = await updateAccountCable(tx, { organisationId: caller.organisationId, cableId }, change);
    if (row) await recordAudit(tx, { organisationId: caller.organisationId, actor, action: 'cable.changed', targetType: 'cable', targetId: row.rowId, details: { cableId, changed: Object.keys(change) } });
    return row;
  });
}

/**
 * Removes an account cable unless a saved feed line uses it (409 naming them); false when the
 * organisation has no cable of that id.
 */
export async function removeAccountCable(db: Db, caller: Caller, cableId: string): Promise<boolean> {
  const scope = { organisationId: caller.organisationId, cableId };
  const actor = await memberActor(db, caller);
  return db.transaction(async (tx) => {
    const users = await feedlinesUsingCable(tx, scope);
    if (users.length > 0) {
      throw new ApiError('conflict', `The cable '${cableId}' is used by the feed line(s) ${users.map((n) => `"${n}"`).join(', ')}; change their sections first (PATCH /api/v1/feedlines/{id}).`);
    }
    const removed = await deleteAccountCable(tx, scope);
    if (!removed) return false;
    await recordAudit(tx, { organisationId: caller.organisationId, actor, action: 'cable.removed', targetType: 'cable', targetId: removed, details: { cableId } });
    return true;
  });
}
