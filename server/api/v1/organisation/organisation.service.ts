import type { Db } from '../../../db/client.ts';
import type { Caller } from '../../../auth/caller.ts';
import { recordAudit } from '../audit/audit.repository.ts';
import { memberActor } from '../members/members.repository.ts';
import { changeDefaultLimits } from './organisation.repository.ts';

/** Changes the default limits for keys issued afterwards (admins); audited with before and after. */
export async function updateDefaultLimits(db: Db, caller: Caller, changes: { defaultDailyQuota?: number; defaultBurstPerMinute?: number }) {
  const actor = await memberActor(db, caller);
  return db.transaction(async (tx) => {
    const { before, after } = await changeDefaultLimits(tx, caller.organisationId, changes);
    await recordAudit(tx, {
      organisationId: caller.organisationId,
      actor,
      action: 'organisation.defaults_changed',
      targetType: 'organisation',
      targetId: caller.organisationId,
      details: {
        before: { defaultDailyQuota: before?.defaultDailyQuota, defaultBurstPerMinute: before?.defaultBurstPerMinute },
        after: { defaultDailyQuota: after?.defaultDailyQuota, defaultBurstPerMinute: after?.defaultBurstPerMinute },
      },
    });
    return after;
  });
}
