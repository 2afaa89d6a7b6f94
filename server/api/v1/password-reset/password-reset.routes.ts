import { Router } from 'express';
import { and, eq, gt, isNull, sql } from 'drizzle-orm';
import type { AppContext } from '../../../context.ts';
import { passwordResets, users } from '../../../db/schema.ts';
import { authProblems, publicAccess } from '../../../auth/openapi.ts';
import { hashPassword, PasswordSchema } from '../../../auth/password.ts';
import { resetMailCounter, resetThrottleByAddress } from '../../../auth/throttle.ts';
import { generateToken, hashToken, looksLikeToken } from '../../../auth/tokens.ts';
import { ApiError } from '../../../http/problem.ts';
import { validateBody } from '../../../http/validate.ts';
import { passwordResetMail } from '../../../mail/messages.ts';
import { problemResponses, registry, json } from '../../../openapi/registry.ts';
import { z } from '../../../zod.ts';
import { endMemberSessions } from '../members/members.repository.ts';

/** Reset links work for an hour. */
const RESET_TTL_MS = 60 * 60 * 1000;

const RequestResetSchema = z
  .strictObject({ email: z.email({ message: 'enter the address you sign in with' }).max(254).openapi({ example: 'ines.marlow@kestrel-ridge.example' }) })
  .openapi('RequestPasswordReset');

const ConfirmResetSchema = z
  .strictObject({
    token: z.string().min(1, 'paste the token from the link in the e-mail').openapi({ example: 'Vb1sQ8mJ2yTt4nCq0rX7eWz3aKf5uGh6LpD9oN1iS2M' }),
    password: PasswordSchema,
  })
  .openapi('ConfirmPasswordReset');

const AcceptedSchema = z.object({ message: z.string().openapi({ example: 'If the address belongs to an active member, a link is on its way; it works for one hour.' }) }).openapi('ResetRequested');

const tags = ['Session'];

registry.registerPath({
  method: 'post',
  path: '/api/v1/password-reset',
  operationId: 'requestPasswordReset',
  security: publicAccess,
  tags,
  summary: 'Ask for a password-reset link',
  description: 'Always answers 202, whether or not the address belongs to a member, so the answer reveals nothing. Throttled per address and per account.',
  request: { body: { required: true, ...json(RequestResetSchema) } },
  responses: { 202: { description: 'Taken into account.', ...json(AcceptedSchema) }, ...problemResponses.validation, ...authProblems.tooManyRequests },
});

registry.registerPath({
  method: 'post',
  path: '/api/v1/password-reset/confirm',
  operationId: 'confirmPasswordReset',
  security: publicAccess,
  tags,
  summary: 'Choose a new password with the token from the e-mail',
  description: 'The token works once and for one hour. Every session of the member ends; sign in again with the new password.',
  request: { body: { required: true, ...json(ConfirmResetSchema) } },
  responses: { 204: { description: 'The password is changed.' }, ...problemResponses.validation, ...problemResponses.unprocessable },
});

const ACCEPTED = { message: 'If the address belongs to an active member, a link is on its way; it works for one hour.' };
const TOKEN_REFUSED = 'This reset link is not valid: it was used, replaced by a newer one, or has expired. Ask for a new one with POST /api/v1/password-reset.';

export function passwordResetRouter(ctx: AppContext): Router {
  const router = Router();
  const db = ctx.database.db;
  const mailsPerAccount = resetMailCounter(ctx);

  router.post('/password-reset', resetThrottleByAddress(ctx), validateBody(RequestResetSchema), async (req, res) => {
    const email = (res.locals.body as z.infer<typeof RequestResetSchema>).email.toLowerCase();
    const [user] = await db.select({ id: users.id, email: users.email, disabled: users.disabled, organisationId: users.organisationId }).from(users).where(sql`lower(${users.email}) = ${email}`);
    if (user && !user.disabled && (await mailsPerAccount.allow(email))) {
      const now = ctx.clock.now();
      const expiresAt = new Date(now.getTime() + RESET_TTL_MS);
      const { token, hash } = generateToken();
      await db.transaction(async (tx) => {
        // Only the newest link works.
        await tx.update(passwordResets).set({ usedAt: sql`now()` }).where(and(eq(passwordResets.userId, user.id), isNull(passwordResets.usedAt)));
        await tx.insert(passwordResets).values({ userId: user.id, tokenHash: hash, expiresAt });
      });
      const link = `${ctx.config.publicUrl}/password-reset?token=${encodeURIComponent(token)}`;
      // A mail failure is logged, not reported: the answer must not differ for known addresses.
      await ctx.mailer.send(passwordResetMail({ to: user.email, organisationId: user.organisationId, link, expiresAt })).catch((err: unknown) => req.log?.error({ err }, 'could not send a reset link'));
    }
    res.status(202).json(ACCEPTED);
  });

  router.post('/password-reset/confirm', validateBody(ConfirmResetSchema), async (_req, res) => {
    const body = res.locals.body as z.infer<typeof ConfirmResetSchema>;
    const refused = () => new ApiError('unprocessable', TOKEN_REFUSED, { errors: [{ field: 'token', message: 'used, replaced, expired or unknown' }] });
    if (!looksLikeToken(body.token)) throw refused();
    const passwordHash = await hashPassword(body.password);
    const now = ctx.clock.now();
    await db.transaction(async (tx) => {
      const [reset] = await tx
        .update(passwordResets)
        .set({ usedAt: sql`now()` })
        .where(and(eq(passwordResets.tokenHash, hashToken(body.token)), isNull(passwordResets.usedAt), gt(passwordResets.expiresAt, now)))
        .returning({ userId: passwordResets.userId });
      if (!reset) throw refused();
      const [user] = await tx
        .update(users)
        .set({ passwordHash })
        .where(and(eq(users.id, reset.userId), eq(users.disabled, false)))
        .returning({ id: users.id });
      if (!user) throw refused();
      // OWASP forgot-password cheat sheet: a reset ends the sessions that existed before it.
      await endMemberSessions(tx, user.id);
    });
    res.status(204).end();
  });

  return router;
}
