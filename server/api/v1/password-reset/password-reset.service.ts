import type { AppContext, Clock } from '../../../context.ts';
import type { Db } from '../../../db/client.ts';
import { hashPassword } from '../../../auth/password.ts';
import { generateToken, hashToken, looksLikeToken } from '../../../auth/tokens.ts';
import { ApiError } from '../../../http/problem.ts';
import { passwordResetMail } from '../../../mail/messages.ts';
import { endMemberSessions, findMemberByEmail, setActiveMemberPassword } from '../members/members.repository.ts';
import { replaceResetToken, spendResetToken } from './password-reset.repository.ts';

/** Reset links work for an hour. */
const RESET_TTL_MS = 60 * 60 * 1000;

const TOKEN_REFUSED = 'This reset link is not valid: it was used, replaced by a newer one, or has expired. Ask for a new one with POST /api/v1/password-reset.';

/**
 * Mails a reset link when the address belongs to an active member and the account's mail budget
 * allows it; otherwise does nothing. The caller answers the same either way, so nothing here may
 * throw for a known address: a mail failure goes to `mailFailed` (the route logs it).
 */
export async function sendResetLink(
  ctx: Pick<AppContext, 'database' | 'clock' | 'config' | 'mailer'>,
  mailsPerAccount: { allow(email: string): Promise<boolean> },
  requestedEmail: string,
  mailFailed: (err: unknown) => void,
): Promise<void> {
  const email = requestedEmail.toLowerCase();
  const member = await findMemberByEmail(ctx.database.db, email);
  if (!member || member.disabled || !(await mailsPerAccount.allow(email))) return;
  const expiresAt = new Date(ctx.clock.now().getTime() + RESET_TTL_MS);
  const { token, hash } = generateToken();
  await replaceResetToken(ctx.database.db, { userId: member.id, tokenHash: hash, expiresAt });
  const link = `${ctx.config.publicUrl}/password-reset?token=${encodeURIComponent(token)}`;
  await ctx.mailer.send(passwordResetMail({ to: member.email, organisationId: member.organisationId, link, expiresAt })).catch(mailFailed);
}

/**
 * Spends the token and sets the new password in one transaction, then ends the member's sessions;
 * a used, replaced, expired or unknown token (or a disabled member) is 422.
 */
export async function resetPassword(db: Db, clock: Clock, token: string, newPassword: string): Promise<void> {
  const refused = () => new ApiError('unprocessable', TOKEN_REFUSED, { errors: [{ field: 'token', message: 'used, replaced, expired or unknown' }] });
  if (!looksLikeToken(token)) throw refused();
  const passwordHash = await hashPassword(newPassword);
  const now = clock.now();
  await db.transaction(async (tx) => {
    const reset = await spendResetToken(tx, hashToken(token), now);
    if (!reset) throw refused();
    const member = await setActiveMemberPassword(tx, reset.userId, passwordHash);
    if (!member) throw refused();
    // OWASP forgot-password cheat sheet: a reset ends the sessions that existed before it.
    await endMemberSessions(tx, member.id);
  });
}
