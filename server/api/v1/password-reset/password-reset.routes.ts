import { Router } from 'express';
import type { AppContext } from '../../../context.ts';
import { authProblems, publicAccess } from '../../../auth/openapi.ts';
import { PasswordSchema } from '../../../auth/password.ts';
import { resetMailCounter, resetThrottleByAddress } from '../../../auth/throttle.ts';
import { input, validateBody } from '../../../http/validate.ts';
import { problemResponses, registry, json } from '../../../openapi/registry.ts';
import { z } from '../../../zod.ts';
import { resetPassword, sendResetLink } from './password-reset.service.ts';

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

export function passwordResetRouter(ctx: AppContext): Router {
  const router = Router();
  const mailsPerAccount = resetMailCounter(ctx);

  router.post('/password-reset', resetThrottleByAddress(ctx), validateBody(RequestResetSchema), async (req, res) => {
    await sendResetLink(ctx, mailsPerAccount, input(res, RequestResetSchema).email, (err) => req.log?.error({ err }, 'could not send a reset link'));
    res.status(202).json(ACCEPTED);
  });

  router.post('/password-reset/confirm', validateBody(ConfirmResetSchema), async (_req, res) => {
    const { token, password } = input(res, ConfirmResetSchema);
    await resetPassword(ctx.database.db, ctx.clock, token, password);
    res.status(204).end();
  });

  return router;
}
