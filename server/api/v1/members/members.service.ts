import type { Db } from '../../../db/client.ts';
import type { Caller } from '../../../auth/caller.ts';
import { ApiError } from '../../../http/problem.ts';
import { recordAudit } from '../audit/audit.repository.ts';
import { endMemberSessions, lockMember, memberActor, updateMemberFields } from './members.repository.ts';
import type { UpdateMember } from './members.schemas.ts';

/**
 * Changes a member's role, name or disabled state (admins). Role and disabled changes are audited
 * with the state before, and disabling ends the member's sessions, all in one transaction.
 */
export async function updateMember(db: Db, caller: Caller, memberId: string, changes: UpdateMember): Promise<void> {
  if (memberId === caller.userId && (changes.role !== undefined || changes.disabled !== undefined)) {
    throw new ApiError('conflict', 'You cannot change your own role or disable yourself, so an organisation never loses its last admin by accident; ask another admin.');
  }
  const actor = await memberActor(db, caller);
  const scope = { organisationId: caller.organisationId, userId: memberId };
  await db.transaction(async (tx) => {
    const before = await lockMember(tx, scope);
    if (!before) throw new ApiError('notFound', 'No member with that id in your organisation; see GET /api/v1/members.');
    await updateMemberFields(tx, scope, changes);
    const auditBase = { organisationId: caller.organisationId, actor, targetType: 'member' as const, targetId: memberId };
    if (changes.role !== undefined && changes.role !== before.role) {
      await recordAudit(tx, { ...auditBase, action: 'member.role_changed', details: { email: before.email, before: before.role, after: changes.role } });
    }
    if (changes.disabled !== undefined && changes.disabled !== before.disabled) {
      await recordAudit(tx, { ...auditBase, action: changes.disabled ? 'member.disabled' : 'member.enabled', details: { email: before.email } });
      if (changes.disabled) await endMemberSessions(tx, memberId);
    }
  });
}
