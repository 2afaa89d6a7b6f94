import { and, desc, eq, lt } from 'drizzle-orm';
import type { Db } from '../../../db/client.ts';
import { auditEvents } from '../../../db/schema.ts';

/** Who acted: a member, or an operator at the CLI (no member). */
export interface Actor {
  userId: string | null;
  label: string;
}

export const CLI_ACTOR: Actor = { userId: null, label: 'operator (CLI)' };

export type AuditAction =
  | 'key.created'
  | 'key.revoked'
  | 'key.quota_changed'
  | 'member.role_changed'
  | 'member.disabled'
  | 'member.enabled'
  | 'member.joined'
  | 'invitation.sent'
  | 'invitation.withdrawn'
  | 'organisation.defaults_changed'
  | 'cable.added'
  | 'cable.changed'
  | 'cable.removed';

export type AuditTargetType = 'key' | 'member' | 'invitation' | 'organisation' | 'cable';

type DbOrTx = Pick<Db, 'insert' | 'select'>;

/** Adds one event; call it inside the transaction that made the change, so both land or neither. */
export async function recordAudit(
  db: DbOrTx,
  e: { organisationId: string; actor: Actor; action: AuditAction; targetType: AuditTargetType; targetId: string; details?: Record<string, unknown> },
): Promise<void> {
  await db.insert(auditEvents).values({
    organisationId: e.organisationId,
    actorUserId: e.actor.userId,
    actorLabel: e.actor.label,
    action: e.action,
    targetType: e.targetType,
    targetId: e.targetId,
    details: e.details ?? {},
  });
}

/** Newest first; `before` pages backwards by time. */
export async function listAudit(db: Db, q: { organisationId: string; limit: number; before?: Date }) {
  return db
    .select()
    .from(auditEvents)
    .where(and(eq(auditEvents.organisationId, q.organisationId), q.before ? lt(auditEvents.createdAt, q.before) : undefined))
    .orderBy(desc(auditEvents.createdAt), desc(auditEvents.id))
    .limit(q.limit);
}
