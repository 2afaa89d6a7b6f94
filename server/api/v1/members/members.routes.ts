import { Router } from 'express';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireAdmin, requireSession } from '../../../auth/caller.ts';
import { authProblems, sessionOnly } from '../../../auth/openapi.ts';
import { input, validateBody, validateParams } from '../../../http/validate.ts';
import { problemResponses, registry, json } from '../../../openapi/registry.ts';
import { findMember, listMembers } from './members.repository.ts';
import { MemberIdParamsSchema, MemberListSchema, MemberSchema, UpdateMemberSchema } from './members.schemas.ts';
import { updateMember } from './members.service.ts';

const tags = ['Members'];

registry.registerPath({
  method: 'get',
  path: '/api/v1/members',
  operationId: 'listMembers',
  tags,
  summary: 'List the members of your organisation (admins)',
  security: sessionOnly,
  responses: { 200: { description: 'Members, oldest first.', ...json(MemberListSchema) }, ...authProblems.unauthenticated, ...authProblems.forbidden },
});

registry.registerPath({
  method: 'patch',
  path: '/api/v1/members/{id}',
  operationId: 'updateMember',
  tags,
  summary: 'Change a member\'s role, name or disabled state (admins)',
  description: 'Disabling ends the member\'s sessions at once and stops their keys; enabling makes the keys work again. Role and disabled changes are audited.',
  security: sessionOnly,
  request: { params: MemberIdParamsSchema, body: { required: true, ...json(UpdateMemberSchema) } },
  responses: {
    200: { description: 'The member after the change.', ...json(MemberSchema) },
    ...problemResponses.validation,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...problemResponses.notFound,
    ...authProblems.conflict,
  },
});

export function membersRouter(ctx: AppContext): Router {
  const router = Router();
  const session = requireSession(ctx);

  router.get('/members', session, requireAdmin, async (_req, res) => {
    res.json({ members: await listMembers(ctx.database.db, callerOf(res).organisationId) });
  });

  router.patch('/members/:id', session, requireAdmin, validateParams(MemberIdParamsSchema), validateBody(UpdateMemberSchema), async (_req, res) => {
    const caller = callerOf(res);
    const { id } = input(res, MemberIdParamsSchema);
    await updateMember(ctx.database.db, caller, id, input(res, UpdateMemberSchema));
    // The database trigger announces the change to every process; this one forgets the member's keys at once.
    ctx.keyServices.cache.forget(`user:${id}`);
    res.json(await findMember(ctx.database.db, { organisationId: caller.organisationId, userId: id }));
  });

  return router;
}
