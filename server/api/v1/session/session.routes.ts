import { Router } from 'express';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireSession } from '../../../auth/caller.ts';
import { authProblems, publicAccess, sessionOnly } from '../../../auth/openapi.ts';
import { endSession, startSession } from '../../../auth/session.ts';
import { signInThrottleByAccount, signInThrottleByAddress } from '../../../auth/throttle.ts';
import { ProblemSchema } from '../../../http/problem.ts';
import { input, validateBody } from '../../../http/validate.ts';
import { problemResponses, registry, json } from '../../../openapi/registry.ts';
import { SessionSchema, SignInSchema } from './session.schemas.ts';
import { checkCredentials, sessionView } from './session.service.ts';

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

export function sessionRouter(ctx: AppContext): Router {
  const router = Router();

  router.post('/session', signInThrottleByAddress(ctx), validateBody(SignInSchema), signInThrottleByAccount(ctx), async (req, res) => {
    const { email, password } = input(res, SignInSchema);
    const member = await checkCredentials(ctx.database.db, email, password);
    const csrfToken = await startSession(req, member.userId);
    req.log?.info({ userId: member.userId }, 'signed in');
    res.setHeader('Cache-Control', 'no-store');
    res.json(await sessionView(ctx.database.db, member, csrfToken));
  });

  router.get('/session', requireSession(ctx), async (req, res) => {
    const caller = callerOf(res);
    res.setHeader('Cache-Control', 'no-store');
    res.json(await sessionView(ctx.database.db, { organisationId: caller.organisationId, userId: caller.userId }, req.session.csrfToken ?? ''));
  });

  router.delete('/session', requireSession(ctx), async (req, res) => {
    await endSession(req, res);
    res.status(204).end();
  });

  return router;
}
