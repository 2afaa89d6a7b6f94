import { Router } from 'express';
import type { AppContext } from '../../../context.ts';
import { keyServicesFor } from '../../../auth/key-services.ts';
import { callerOf, requireAdmin, requireSession } from '../../../auth/caller.ts';
import { authProblems, sessionOnly } from '../../../auth/openapi.ts';
import { ApiError } from '../../../http/problem.ts';
import { validateBody, validateParams } from '../../../http/validate.ts';
import { problemResponses, registry, json } from '../../../openapi/registry.ts';
import { recordAudit } from '../audit/audit.repository.ts';
import { endMemberSessions, findMember, listMembers, lockMember, memberActor, updateMemberFields } from './members.repository.ts';
import { MemberIdParamsSchema, MemberListSchema, MemberSchema, UpdateMemberSchema, type UpdateMember } from './members.schemas.ts';

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
    const { id } = res.locals.params as { id: string };
    const changes = res.locals.body as UpdateMember;
    if (id === caller.userId && (changes.role !== undefined || changes.disabled !== undefined)) {
      throw new ApiError('conflict', 'You cannot change your own role or disable yourself, so an organisation never loses its last admin by accident; ask another admin.');
    }
    const actor = await memberActor(ctx.database.db, caller);
    const scope = { organisationId: caller.organisationId, userId: id };
    await ctx.database.db.transaction(async (tx) => {
      const before = await lockMember(tx, scope);
      if (!before) throw new ApiError('notFound', 'No member with that id in your organisation; see GET /api/v1/members.');
      await updateMemberFields(tx, scope, changes);
      const base = { organisationId: caller.organisationId, actor, targetType: 'member' as const, targetId: id };
      if (changes.role !== undefined && changes.role !== before.role) {
        await recordAudit(tx, { ...base, action: 'member.role_changed', details: { email: before.email, before: before.role, after: changes.role } });
      }
      if (changes.disabled !== undefined && changes.disabled !== before.disabled) {
        await recordAudit(tx, { ...base, action: changes.disabled ? 'member.disabled' : 'member.enabled', details: { email: before.email } });
        if (changes.disabled) await endMemberSessions(tx, id);
      }
    });
    // The database trigger announces the change to every process; this one forgets the member's keys at once.
    keyServicesFor(ctx.database, ctx.logger).cache.forget(`user:${id}`);
    res.json(await findMember(ctx.database.db, scope));
  });

  return router;
}
