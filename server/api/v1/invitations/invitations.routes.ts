import { Router } from 'express';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireAdmin, requireSession } from '../../../auth/caller.ts';
import { authProblems, publicAccess, sessionOnly } from '../../../auth/openapi.ts';
import { input, validateBody, validateParams } from '../../../http/validate.ts';
import { problemResponses, registry, json } from '../../../openapi/registry.ts';
import { z } from '../../../zod.ts';
import { MemberSchema } from '../members/members.schemas.ts';
import { AcceptInvitationSchema, CreateInvitationSchema, InvitationIdParamsSchema, InvitationSchema } from './invitations.schemas.ts';
import { accept, invitationsOf, invite, withdraw, type SignedInAccount } from './invitations.service.ts';
import { startSession } from '../../../auth/session.ts';

const tags = ['Invitations'];

registry.registerPath({
  method: 'get',
  path: '/api/v1/invitations',
  operationId: 'listInvitations',
  tags,
  summary: 'List invitations (admins)',
  security: sessionOnly,
  responses: { 200: { description: 'Invitations, newest first.', ...json(z.object({ invitations: z.array(InvitationSchema) }).openapi('InvitationList')) }, ...authProblems.unauthenticated, ...authProblems.forbidden },
});

registry.registerPath({
  method: 'post',
  path: '/api/v1/invitations',
  operationId: 'createInvitation',
  tags,
  summary: 'Invite someone by e-mail (admins)',
  description: 'Sends a single-use link valid for 7 days. A newer invitation to the same address replaces a pending one.',
  security: sessionOnly,
  request: { body: { required: true, ...json(CreateInvitationSchema) } },
  responses: {
    201: { description: 'The invitation (the token only travels in the e-mail).', ...json(InvitationSchema) },
    ...problemResponses.validation,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...authProblems.conflict,
    ...problemResponses.unavailable,
  },
});

registry.registerPath({
  method: 'delete',
  path: '/api/v1/invitations/{id}',
  operationId: 'withdrawInvitation',
  tags,
  summary: 'Withdraw a pending invitation (admins)',
  security: sessionOnly,
  request: { params: InvitationIdParamsSchema },
  responses: { 200: { description: 'The withdrawn invitation.', ...json(InvitationSchema) }, ...problemResponses.validation, ...authProblems.unauthenticated, ...authProblems.forbidden, ...problemResponses.notFound },
});

registry.registerPath({
  method: 'post',
  path: '/api/v1/invitations/accept',
  operationId: 'acceptInvitation',
  security: publicAccess,
  tags,
  summary: 'Accept an invitation',
  description: [
    'The token in the e-mail works once. **Without a session**: `token`, `displayName` and `password` create a new account in the inviting organisation (201); then sign in with POST /api/v1/session. ',
    'If the invited address already has an account, the answer is 409: sign in with it first. ',
    '**Signed in as the invited address** (session cookie and `X-CSRF-Token`): `token` alone; the account moves to the inviting organisation with the invited role (200). ',
    'An account belongs to one organisation, so it leaves its current one: its API keys there are revoked, its sweeps and feed lines stay there, and both audit trails record the move (`member.left`, `member.joined`). ',
    'The only admin of an organisation cannot leave it (409). Every session of the account ends and this one continues under a new session id: read the new `csrfToken` from GET /api/v1/session. ',
    'A refused acceptance (400, 409) leaves the token unspent.',
  ].join(''),
  request: { body: { required: true, ...json(AcceptInvitationSchema) } },
  responses: {
    200: { description: 'Signed in as the invited address: the account, now a member of the inviting organisation.', ...json(MemberSchema) },
    201: { description: 'The new member.', ...json(MemberSchema) },
    ...problemResponses.validation,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...problemResponses.unprocessable,
    ...authProblems.conflict,
  },
});

export function invitationsRouter(ctx: AppContext): Router {
  const router = Router();
  const session = requireSession(ctx);
  const db = ctx.database.db;

  router.get('/invitations', session, requireAdmin, async (_req, res) => {
    res.json({ invitations: await invitationsOf(db, callerOf(res).organisationId, ctx.clock) });
  });

  router.post('/invitations', session, requireAdmin, validateBody(CreateInvitationSchema), async (_req, res) => {
    const invitation = await invite(ctx, callerOf(res), input(res, CreateInvitationSchema));
    res.status(201).json(invitation);
  });

  router.delete('/invitations/:id', session, requireAdmin, validateParams(InvitationIdParamsSchema), async (_req, res) => {
    res.json(await withdraw(db, ctx.clock, callerOf(res), input(res, InvitationIdParamsSchema).id));
  });

  router.post('/invitations/accept', validateBody(AcceptInvitationSchema), async (req, res) => {
    // A console session accepts as its account (checked like any console write: active member, CSRF
    // token); without one, the token creates a new account.
    let signedIn: SignedInAccount | undefined;
    if (req.session?.userId) {
      await session(req, res, () => undefined);
      signedIn = { userId: callerOf(res).userId };
    }
    const accepted = await accept(db, ctx.clock, input(res, AcceptInvitationSchema), signedIn);
    if (accepted.outcome === 'moved') {
      await startSession(req, accepted.member.id);
      res.setHeader('Cache-Control', 'no-store');
      res.status(200).json(accepted.member);
      return;
    }
    res.status(201).json(accepted.member);
  });

  return router;
}
