import { and, asc, eq, sql } from 'drizzle-orm';
import type { Db, DbOrTx } from '../../../db/client.ts';
import { users } from '../../../db/schema.ts';
import type { Caller } from '../../../auth/caller.ts';
import type { Actor } from '../audit/audit.repository.ts';
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
type Role = MemberRow['role'];

/** The answer's fields picked one by one, so a row with more columns (a password hash) can never leak through. */
export function toMemberView(row: MemberRow): MemberView {
  return { id: row.id, email: row.email, displayName: row.displayName, role: row.role, disabled: row.disabled, createdAt: row.createdAt.toISOString() };
}

export async function listMembers(db: DbOrTx, organisationId: string): Promise<MemberView[]> {
  const rows = await db.select(memberColumns).from(users).where(eq(users.organisationId, organisationId)).orderBy(asc(users.createdAt), asc(users.email));
  return rows.map(toMemberView);
}

export async function findMember(db: DbOrTx, scope: { organisationId: string; userId: string }): Promise<MemberView | undefined> {
  const rows = await db.select(memberColumns).from(users).where(and(eq(users.organisationId, scope.organisationId), eq(users.id, scope.userId)));
  return rows[0] ? toMemberView(rows[0]) : undefined;
}

/**
 * The account that signs in with this address, in any organisation, or undefined. Addresses are
 * unique without regard to case (the `users_email_unique` index on `lower(email)`), so this is the
 * one lookup by address. It carries the password hash for sign-in: never put it in an answer.
 */
export async function findMemberByEmail(db: DbOrTx, email: string) {
  const rows = await db
    .select({ id: users.id, organisationId: users.organisationId, email: users.email, role: users.role, disabled: users.disabled, passwordHash: users.passwordHash })
    .from(users)
    .where(sql`lower(${users.email}) = ${email.toLowerCase()}`);
  return rows[0];
}

/** Adds a member (an accepted invitation); the new member's columns, never the password hash. */
export async function insertMember(db: DbOrTx, values: { organisationId: string; email: string; displayName: string; role: Role; passwordHash: string }) {
  const [created] = await db.insert(users).values(values).returning(memberColumns);
  return created!;
}

/** Locks the member row for a change, so concurrent role edits are audited in order. */
export async function lockMember(db: DbOrTx, scope: { organisationId: string; userId: string }) {
  const rows = await db.select(memberColumns).from(users).where(and(eq(users.organisationId, scope.organisationId), eq(users.id, scope.userId))).for('update');
  return rows[0];
}

export async function updateMemberFields(db: DbOrTx, scope: { organisationId: string; userId: string }, changes: Partial<{ role: Role; disabled: boolean; displayName: string }>) {
  await db.update(users).set(changes).where(and(eq(users.organisationId, scope.organisationId), eq(users.id, scope.userId)));
}

/** Sets a new password unless the member is disabled; undefined when no active member has this id. */
export async function setActiveMemberPassword(db: DbOrTx, userId: string, passwordHash: string): Promise<{ id: string } | undefined> {
  const rows = await db
    .update(users)
    .set({ passwordHash })
    .where(and(eq(users.id, userId), eq(users.disabled, false)))
    .returning({ id: users.id });
  return rows[0];
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

/**
 * Locks the active admins of an organisation (in one order, so two admins leaving at once cannot
 * deadlock) and answers their ids: whoever leaves must not take the last one with them.
 */
export async function lockActiveAdmins(db: DbOrTx, organisationId: string): Promise<string[]> {
  const rows = await db
    .select({ id: users.id })
    .from(users)
    .where(and(eq(users.organisationId, organisationId), eq(users.role, 'admin'), eq(users.disabled, false)))
    .orderBy(asc(users.id))
    .for('update');
  return rows.map((row) => row.id);
}

/** Moves an account to another organisation with a role there (an accepted invitation); the member's columns. */
export async function moveMember(db: DbOrTx, move: { userId: string; fromOrganisationId: string; toOrganisationId: string; role: Role }) {
  const [moved] = await db
    .update(users)
    .set({ organisationId: move.toOrganisationId, role: move.role })
    .where(and(eq(users.id, move.userId), eq(users.organisationId, move.fromOrganisationId)))
    .returning(memberColumns);
  return moved;
}
