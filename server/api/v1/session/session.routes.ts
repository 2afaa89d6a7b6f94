import { Router } from 'express';
import { eq, sql } from 'drizzle-orm';
import type { AppContext } from '../../../context.ts';
import { organisations, users } from '../../../db/schema.ts';
import { callerOf, requireSession } from '../../../auth/caller.ts';
import { authProblems, publicAccess, sessionOnly } from '../../../auth/openapi.ts';
import { verifyPassword } from '../../../auth/password.ts';
import { endSession, startSession } from '../../../auth/session.ts';
import { signInThrottleByAccount, signInThrottleByAddress } from '../../../auth/throttle.ts';
import { ApiError, ProblemSchema } from '../../../http/problem.ts';
import { validateBody } from '../../../http/validate.ts';
import { problemResponses, registry, json } from '../../../openapi/registry.ts';
import { z } from '../../../zod.ts';
import { findMember } from '../members/members.repository.ts';
import { MemberSchema } from '../members/members.schemas.ts';

const SignInSchema = z
  .strictObject({
    email: z.email({ message: 'enter the e-mail address you were invited with' }).max(254).openapi({ example: 'admin@kestrel-ridge.example' }),
    password: z.string().min(1, 'enter your password').max(256).openapi({ example: 'gammaline-demo-2026' }),
  })
  .openapi('SignIn');

const SessionSchema = z
  .object({
    member: MemberSchema,
    organisation: z.object({ id: z.uuid(), name: z.string().openapi({ example: 'Kestrel Ridge Radio Club' }), slug: z.string().openapi({ example: 'kestrel-ridge' }) }),
    csrfToken: z.string().openapi({ description: 'Send as `X-CSRF-Token` on every console write (POST, PATCH, DELETE) with this session.', example: 'q0bT1x7m4f0Hk2cZr8w3VYd6sNn5pAeJ1uLgQ9iK2oE' }),
  })
  .openapi('Session');

const tags = ['Session'];

registry.registerPath({
  method: 'post',
  path: '/api/v1/session',
  operationId: 'signIn',
  security: publicAccess,
  tags,
  summary: 'Sign in to the console',
  description:
    'Checks e-mail and password and sets the session cookie (httpOnly, SameSite=Lax, Secure in production). ' +
    'Failed attempts are throttled per account and per client address (429 with Retry-After). Disabled members cannot sign in.',
  request: { body: { required: true, ...json(SignInSchema) } },
  responses: {
    200: { description: 'Signed in; the cookie is set and the answer carries the CSRF token.', ...json(SessionSchema) },
    ...problemResponses.validation,
    401: { description: 'E-mail or password is wrong (the answer does not say which).', content: { 'application/problem+json': { schema: ProblemSchema } } },
    ...authProblems.tooManyRequests,
  },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/session',
  operationId: 'getSession',
  tags,
  summary: 'Who am I',
  description: 'The signed-in member, their organisation and the session\'s CSRF token.',
  security: sessionOnly,
  responses: { 200: { description: 'The current session.', ...json(SessionSchema) }, ...authProblems.unauthenticated, ...authProblems.forbidden },
});

registry.registerPath({
  method: 'delete',
  path: '/api/v1/session',
  operationId: 'signOut',
  tags,
  summary: 'Sign out',
  description: 'Ends the session (the row is deleted) and clears the cookie. Needs `X-CSRF-Token`.',
  security: sessionOnly,
  responses: { 204: { description: 'Signed out.' }, ...authProblems.unauthenticated, ...authProblems.forbidden },
});

const WRONG_CREDENTIALS = 'E-mail or password is wrong. Forgot the password? POST /api/v1/password-reset sends a link.';

async function sessionView(ctx: AppContext, organisationId: string, userId: string, csrfToken: string) {
  const member = await findMember(ctx.database.db, { organisationId, userId });
  const [organisation] = await ctx.database.db
    .select({ id: organisations.id, name: organisations.name, slug: organisations.slug })
    .from(organisations)
    .where(eq(organisations.id, organisationId));
  return { member, organisation, csrfToken };
}

export function sessionRouter(ctx: AppContext): Router {
  const router = Router();

  router.post('/session', signInThrottleByAddress(ctx), validateBody(SignInSchema), signInThrottleByAccount(ctx), async (req, res) => {
    const { email, password } = res.locals.body as z.infer<typeof SignInSchema>;
    const rows = await ctx.database.db
      .select({ id: users.id, organisationId: users.organisationId, passwordHash: users.passwordHash, disabled: users.disabled })
      .from(users)
      .where(sql`lower(${users.email}) = ${email.toLowerCase()}`);
    const user = rows[0];
    // Always verify something, so unknown addresses take as long as wrong passwords.
    const ok = await verifyPassword(user?.passwordHash, password);
    if (!user || !ok || user.disabled) throw new ApiError('unauthenticated', WRONG_CREDENTIALS);
    const csrfToken = await startSession(req, user.id);
    req.log?.info({ userId: user.id }, 'signed in');
    res.setHeader('Cache-Control', 'no-store');
    res.json(await sessionView(ctx, user.organisationId, user.id, csrfToken));
  });

  router.get('/session', requireSession(ctx), async (req, res) => {
    const caller = callerOf(res);
    res.setHeader('Cache-Control', 'no-store');
    res.json(await sessionView(ctx, caller.organisationId, caller.userId, req.session.csrfToken ?? ''));
  });

  router.delete('/session', requireSession(ctx), async (req, res) => {
    await endSession(req, res);
    res.status(204).end();
  });

  return router;
}
