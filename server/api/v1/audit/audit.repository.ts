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
  | 'member.left'
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
  event: { organisationId: string; actor: Actor; action: AuditAction; targetType: AuditTargetType; targetId: string; details?: Record<string, unknown> },
): Promise<void> {
  await db.insert(auditEvents).values({
    organisationId: event.organisationId,
    actorUserId: event.actor.userId,
    actorLabel: event.actor.label,
    action: event.action,
    targetType: event.targetType,
    targetId: event.targetId,
    details: event.details ?? {},
  });
}

/** Newest first; `before` pages backwards by time. */
export async function listAudit(db: Db, page: { organisationId: string; limit: number; before?: Date }) {
  return db
    .select()
    .from(auditEvents)
    .where(and(eq(auditEvents.organisationId, page.organisationId), page.before ? lt(auditEvents.createdAt, page.before) : undefined))
    .orderBy(desc(auditEvents.createdAt), desc(auditEvents.id))
    .limit(page.limit);
}
