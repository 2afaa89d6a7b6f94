import { and, asc, eq, sql } from 'drizzle-orm';
import type { Db } from '../../../db/client.ts';
import { users } from '../../../db/schema.ts';
import type { Caller } from '../../../auth/caller.ts';
import type { Actor } from '../audit/audit.repository.ts';
import type { DbOrTx } from '../keys/keys.repository.ts';
import type { MemberView } from './members.schemas.ts';

// Never the password hash.
const memberColumns = {
  id: users.id,
  email: users.email,
  displayName: users.displayName,
  role: users.role,
  disabled: users.disabled,
  createdAt: users.createdAt,
};

type MemberRow = { id: string; email: string; displayName: string; role: 'admin' | 'developer'; disabled: boolean; createdAt: Date };

export function toMemberView(row: MemberRow): MemberView {
  return { ...row, createdAt: row.createdAt.toISOString() };
}

export async function listMembers(db: DbOrTx, organisationId: string): Promise<MemberView[]> {
  const rows = await db.select(memberColumns).from(users).where(eq(users.organisationId, organisationId)).orderBy(asc(users.createdAt), asc(users.email));
  return rows.map(toMemberView);
}

export async function findMember(db: DbOrTx, q: { organisationId: string; userId: string }): Promise<MemberView | undefined> {
  const rows = await db.select(memberColumns).from(users).where(and(eq(users.organisationId, q.organisationId), eq(users.id, q.userId)));
  return rows[0] ? toMemberView(rows[0]) : undefined;
}

/** Locks the member row for a change, so concurrent role edits are audited in order. */
export async function lockMember(db: DbOrTx, q: { organisationId: string; userId: string }) {
  const rows = await db.select(memberColumns).from(users).where(and(eq(users.organisationId, q.organisationId), eq(users.id, q.userId))).for('update');
  return rows[0];
}

export async function updateMemberFields(db: DbOrTx, q: { organisationId: string; userId: string }, set: Partial<{ role: 'admin' | 'developer'; disabled: boolean; displayName: string }>) {
  await db.update(users).set(set).where(and(eq(users.organisationId, q.organisationId), eq(users.id, q.userId)));
}

/** Ends every console session of a member (after disabling or a password reset). */
export async function endMemberSessions(db: DbOrTx, userId: string): Promise<void> {
  await db.execute(sql`delete from user_sessions where sess->>'userId' = ${userId}`);
}

/** The audit trail names members by address as it was at the time. */
export async function memberActor(db: Db, caller: Caller): Promise<Actor> {
  const rows = await db.select({ email: users.email }).from(users).where(and(eq(users.id, caller.userId), eq(users.organisationId, caller.organisationId)));
  return { userId: caller.userId, label: rows[0]?.email ?? caller.userId };
}
