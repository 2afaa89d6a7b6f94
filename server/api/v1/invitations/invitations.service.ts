import type { AppContext, Clock } from '../../../context.ts';
import type { Db, DbOrTx, Tx } from '../../../db/client.ts';
import type { Caller } from '../../../auth/caller.ts';
import { hashPassword } from '../../../auth/password.ts';
import { generateToken, hashToken, looksLikeToken } from '../../../auth/tokens.ts';
import { ApiError } from '../../../http/problem.ts';
import { invitationMail } from '../../../mail/messages.ts';
import { recordAudit } from '../audit/audit.repository.ts';
import { endMemberSessions, findMemberByEmail, insertMember, lockActiveAdmins, memberActor, moveMember, toMemberView } from '../members/members.repository.ts';
import { listKeys, markRevoked } from '../keys/keys.repository.ts';
import { utcDay } from '../../../quota/day.ts';
import type { MemberView } from '../members/members.schemas.ts';
import { findOrganisationSummary } from '../organisation/organisation.repository.ts';
import { insertInvitation, listInvitations, spendInvitation, withdrawInvitation, withdrawPendingTo, type InvitationRow } from './invitations.repository.ts';
import type { AcceptInvitation, CreateInvitation, InvitationView } from './invitations.schemas.ts';

/** Invitation links work for a week. */
const INVITATION_TTL_MS = 7 * 24 * 60 * 60 * 1000;

const TOKEN_REFUSED = 'This invitation link is not valid: it was used, withdrawn, or has expired. Ask an admin to invite you again.';

export function invitationView(row: InvitationRow, now: Date): InvitationView {
  const state = row.acceptedAt ? 'accepted' : row.withdrawnAt ? 'withdrawn' : row.expiresAt <= now ? 'expired' : 'pending';
  return { id: row.id, email: row.email, role: row.role, state, expiresAt: row.expiresAt.toISOString(), createdAt: row.createdAt.toISOString() };
}

export async function invitationsOf(db: Db, organisationId: string, clock: Clock): Promise<InvitationView[]> {
  const rows = await listInvitations(db, organisationId);
  const now = clock.now();
  return rows.map((row) => invitationView(row, now));
}

/**
 * Whether the address already signs in to Gammaline. A member of the inviting organisation is refused
 * (409: its admins see their members anyway); an account in another organisation is invited like a new
 * address, so the answer never tells one organisation who belongs to another. Only the letter differs.
 */
async function existingAccountOf(db: DbOrTx, email: string, organisationId: string): Promise<boolean> {
  const account = await findMemberByEmail(db, email);
  if (account?.organisationId === organisationId) throw new ApiError('conflict', `${email} already has a Gammaline account; change their role under /api/v1/members instead.`);
  return account !== undefined;
}

/**
 * Invites an address to the caller's organisation (admins): replaces a pending invitation to it,
 * audits, and mails the single-use link. The token travels only in the mail; when the mail server
 * refuses the message the invitation stays saved and the answer is 503 so the admin sends it again.
 */
export async function invite(ctx: Pick<AppContext, 'database' | 'clock' | 'config' | 'mailer'>, caller: Caller, invitation: CreateInvitation): Promise<InvitationView> {
  const db = ctx.database.db;
  const email = invitation.email.toLowerCase();
  const hasAccount = await existingAccountOf(db, email, caller.organisationId);
  const actor = await memberActor(db, caller);
  const now = ctx.clock.now();
  const expiresAt = new Date(now.getTime() + INVITATION_TTL_MS);
  const { token, hash } = generateToken();
  const row = await db.transaction(async (tx) => {
    await withdrawPendingTo(tx, { organisationId: caller.organisationId, email });
    const created = await insertInvitation(tx, { organisationId: caller.organisationId, email, role: invitation.role, tokenHash: hash, invitedBy: caller.userId, expiresAt });
    await recordAudit(tx, { organisationId: caller.organisationId, actor, action: 'invitation.sent', targetType: 'invitation', targetId: created.id, details: { email, role: invitation.role } });
    return created;
  });
  const organisation = await findOrganisationSummary(db, caller.organisationId);
  const link = `${ctx.config.publicUrl}/invitation?token=${encodeURIComponent(token)}`;
  try {
    await ctx.mailer.send(
      invitationMail({ to: email, organisationId: caller.organisationId, organisationName: organisation?.name ?? 'your organisation', invitedBy: actor.label, role: invitation.role, link, expiresAt, hasAccount }),
    );
  } catch (err) {
    throw new ApiError('unavailable', 'The invitation was saved but the mail server did not take the message; send the invitation again shortly.', {
      headers: { 'Retry-After': '30' },
      cause: err,
    });
  }
  return invitationView(row, now);
}

/** Withdraws a pending invitation of the caller's organisation (admins), audited; 404 when there is none. */
export async function withdraw(db: Db, clock: Clock, caller: Caller, invitationId: string): Promise<InvitationView> {
  const actor = await memberActor(db, caller);
  const row = await db.transaction(async (tx) => {
    const withdrawn = await withdrawInvitation(tx, { organisationId: caller.organisationId, invitationId });
    if (!withdrawn) throw new ApiError('notFound', 'No pending invitation with that id; GET /api/v1/invitations lists them.');
    await recordAudit(tx, { organisationId: caller.organisationId, actor, action: 'invitation.withdrawn', targetType: 'invitation', targetId: invitationId, details: { email: withdrawn.email } });
    return withdrawn;
  });
  return invitationView(row, clock.now());
}

/** The account of a signed-in console session that accepts an invitation. */
export interface SignedInAccount {
  userId: string;
}

export type Acceptance = { outcome: 'joined' | 'moved'; member: MemberView };

/**
 * Accepts an invitation. Signed in as the invited address, the account moves to the inviting
 * organisation (acceptMove); otherwise a new account is created from the name and password. Spending
 * the token and the change are one transaction, so a second use finds no live invitation (422), and a
 * refusal (409, 400) leaves the token unspent.
 */
export async function accept(db: Db, clock: Clock, acceptance: AcceptInvitation, signedIn?: SignedInAccount): Promise<Acceptance> {
  const refused = () => new ApiError('unprocessable', TOKEN_REFUSED, { errors: [{ field: 'token', message: 'used, withdrawn, expired or unknown' }] });
  if (!looksLikeToken(acceptance.token)) throw refused();
  // Hashed outside the transaction: it is slow on purpose, and the invitation row stays locked meanwhile.
  const passwordHash = acceptance.password === undefined ? undefined : await hashPassword(acceptance.password);
  const now = clock.now();
  return db.transaction(async (tx) => {
    const invitation = await spendInvitation(tx, hashToken(acceptance.token), now);
    if (!invitation) throw refused();
    const account = await findMemberByEmail(tx, invitation.email);
    const organisation = await findOrganisationSummary(tx, invitation.organisationId);
    const organisationName = organisation?.name ?? 'the inviting organisation';
    if (account?.organisationId === invitation.organisationId) {
      throw new ApiError('conflict', `${invitation.email} is already a member of ${organisationName}; sign in with POST /api/v1/session.`);
    }
    if (account && signedIn?.userId === account.id) {
      return { outcome: 'moved', member: await acceptMove(tx, invitation, account, now) };
    }
    if (account) {
      // Only the holder of the token reads this, so naming the account is no leak.
      throw new ApiError(
        'conflict',
        `${invitation.email} already has a Gammaline account. Sign in with it (POST /api/v1/session), then accept this invitation while signed in; the account then moves to ${organisationName}.`,
      );
    }
    if (acceptance.displayName === undefined || passwordHash === undefined) {
      const missing = [acceptance.displayName === undefined ? 'displayName' : undefined, passwordHash === undefined ? 'password' : undefined].filter((f) => f !== undefined);
      throw new ApiError('validation', `A new account needs ${missing.join(' and ')}; send them with the token.`, {
        errors: missing.map((field) => ({ field, message: field === 'password' ? 'choose a password of at least 12 characters' : 'enter the name other members will see' })),
      });
    }
    const created = await insertMember(tx, { organisationId: invitation.organisationId, email: invitation.email, displayName: acceptance.displayName, role: invitation.role, passwordHash });
    await recordAudit(tx, {
      organisationId: invitation.organisationId,
      actor: { userId: created.id, label: invitation.email },
      action: 'member.joined',
      targetType: 'member',
      targetId: created.id,
      details: { role: invitation.role, invitationId: invitation.id },
    });
    return { outcome: 'joined', member: toMemberView(created) };
  });
}

/**
 * Moves a signed-in account to the organisation that invited it. Accounts belong to one organisation,
 * so it leaves its current one: its keys there are revoked, its sweeps and feed lines stay there, and
 * both audit trails record the move (the old one without saying where it went). Refused while it is
 * the only admin there, so no organisation is left without one. Every session of the account ends; the
 * route starts a fresh one for this browser (a new session id after a change of privileges).
 */
async function acceptMove(
  tx: Tx,
  invitation: InvitationRow,
  account: { id: string; email: string; role: 'admin' | 'developer'; organisationId: string },
  now: Date,
): Promise<MemberView> {
  const from = account.organisationId;
  const actor = { userId: account.id, label: account.email };
  if (account.role === 'admin') {
    const admins = await lockActiveAdmins(tx, from);
    if (!admins.some((id) => id !== account.id)) {
      const current = await findOrganisationSummary(tx, from);
      throw new ApiError(
        'conflict',
        `You are the only admin of ${current?.name ?? 'your current organisation'}; make another member an admin there first (the Admin page, or PATCH /api/v1/members/{id}), then accept this invitation again.`,
      );
    }
  }
  const keys = await listKeys(tx, { organisationId: from, userId: account.id, now, day: utcDay(now) });
  for (const key of keys) {
    if (key.state === 'revoked') continue;
    if (await markRevoked(tx, { organisationId: from, keyId: key.id, userId: account.id })) {
      await recordAudit(tx, { organisationId: from, actor, action: 'key.revoked', targetType: 'key', targetId: key.id, details: { reason: 'the owner left the organisation' } });
    }
  }
  const moved = await moveMember(tx, { userId: account.id, fromOrganisationId: from, toOrganisationId: invitation.organisationId, role: invitation.role });
  if (!moved) throw new ApiError('conflict', 'Your account changed while accepting; reload the page and accept again.');
  await recordAudit(tx, { organisationId: from, actor, action: 'member.left', targetType: 'member', targetId: account.id, details: { email: account.email } });
  await recordAudit(tx, {
    organisationId: invitation.organisationId,
    actor,
    action: 'member.joined',
    targetType: 'member',
    targetId: account.id,
    details: { role: invitation.role, invitationId: invitation.id },
  });
  await endMemberSessions(tx, account.id);
  return toMemberView(moved);
}
