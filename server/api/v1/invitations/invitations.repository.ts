import { and, desc, eq, gt, isNull, sql } from 'drizzle-orm';
import type { Db, DbOrTx } from '../../../db/client.ts';
import { invitations } from '../../../db/schema.ts';

export type InvitationRow = typeof invitations.$inferSelect;

/** The organisation's invitations, newest first. */
export async function listInvitations(db: Db, organisationId: string): Promise<InvitationRow[]> {
  return db.select().from(invitations).where(eq(invitations.organisationId, organisationId)).orderBy(desc(invitations.createdAt));
}

/** Neither accepted nor withdrawn (it may still have expired). */
function isPending() {
  return and(isNull(invitations.acceptedAt), isNull(invitations.withdrawnAt));
}

/** Withdraws the pending invitations of the organisation to an address (only the newest link to it works). */
export async function withdrawPendingTo(db: DbOrTx, scope: { organisationId: string; email: string }): Promise<void> {
  await db
    .update(invitations)
    .set({ withdrawnAt: sql`now()` })
    .where(and(eq(invitations.organisationId, scope.organisationId), eq(invitations.email, scope.email), isPending()));
}

export async function insertInvitation(
  db: DbOrTx,
  values: { organisationId: string; email: string; role: 'admin' | 'developer'; tokenHash: string; invitedBy: string; expiresAt: Date },
): Promise<InvitationRow> {
  const [created] = await db.insert(invitations).values(values).returning();
  return created!;
}

/** Withdraws one pending invitation of the organisation; undefined when there is no such pending one. */
export async function withdrawInvitation(db: DbOrTx, scope: { organisationId: string; invitationId: string }): Promise<InvitationRow | undefined> {
  const rows = await db
    .update(invitations)
    .set({ withdrawnAt: sql`now()` })
    .where(and(eq(invitations.organisationId, scope.organisationId), eq(invitations.id, scope.invitationId), isPending()))
    .returning();
  return rows[0];
}

/** Marks a live invitation (pending, not expired at `now`) accepted; undefined when the token matches none. */
export async function spendInvitation(db: DbOrTx, tokenHash: string, now: Date): Promise<InvitationRow | undefined> {
  const rows = await db
    .update(invitations)
    .set({ acceptedAt: sql`now()` })
    .where(and(eq(invitations.tokenHash, tokenHash), isPending(), gt(invitations.expiresAt, now)))
    .returning();
  return rows[0];
}
