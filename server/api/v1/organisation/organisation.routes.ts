import { Router } from 'express';
import { eq } from 'drizzle-orm';
import type { AppContext } from '../../../context.ts';
import { organisations } from '../../../db/schema.ts';
import { callerOf, requireAdmin, requireCaller, requireSession } from '../../../auth/caller.ts';
import { authProblems, keyOrSession, sessionOnly } from '../../../auth/openapi.ts';
import { validateBody } from '../../../http/validate.ts';
import { problemResponses, registry, json } from '../../../openapi/registry.ts';
import { z } from '../../../zod.ts';
import { recordAudit } from '../audit/audit.repository.ts';
import { memberActor } from '../members/members.repository.ts';

export const OrganisationSchema = z
  .object({
    id: z.uuid(),
    name: z.string().openapi({ example: 'Kestrel Ridge Radio Club' }),
    slug: z.string().openapi({ example: 'kestrel-ridge' }),
    defaultDailyQuota: z.number().int().openapi({ description: 'Units per UTC day a new key gets unless set per key.', example: 10000 }),
    defaultBurstPerMinute: z.number().int().openapi({ description: 'Requests per minute for new keys and for each member\'s console calls.', example: 120 }),
  })
  .openapi('Organisation');

const UpdateOrganisationSchema = z
  .strictObject({
    defaultDailyQuota: z.number().int().min(1).max(100_000_000).optional().openapi({ example: 20000 }),
    defaultBurstPerMinute: z.number().int().min(1).max(1_000_000).optional().openapi({ example: 240 }),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'send defaultDailyQuota, defaultBurstPerMinute or both', params: { shape: true } })
  .openapi('UpdateOrganisation', { description: 'New defaults apply to keys issued afterwards; existing keys keep their limits.' });


registry.registerPath({
  method: 'get',
  path: '/api/v1/organisation',
  operationId: 'getOrganisation',
  tags: ['Organisation'],
  summary: 'Your organisation and its default limits',
  security: keyOrSession,
  responses: { 200: { description: 'The organisation.', ...json(OrganisationSchema) }, ...authProblems.unauthenticated },
});

registry.registerPath({
  method: 'patch',
  path: '/api/v1/organisation',
  operationId: 'updateOrganisation',
  tags: ['Organisation'],
  summary: 'Change the default limits for new keys (admins)',
  security: sessionOnly,
  request: { body: { required: true, ...json(UpdateOrganisationSchema) } },
  responses: { 200: { description: 'The organisation after the change.', ...json(OrganisationSchema) }, ...problemResponses.validation, ...authProblems.unauthenticated, ...authProblems.forbidden },
});

const columns = {
  id: organisations.id,
  name: organisations.name,
  slug: organisations.slug,
  defaultDailyQuota: organisations.defaultDailyQuota,
  defaultBurstPerMinute: organisations.defaultBurstPerMinute,
};

export function organisationRouter(ctx: AppContext): Router {
  const router = Router();

  router.get('/organisation', requireCaller(ctx), async (_req, res) => {
    const rows = await ctx.database.db.select(columns).from(organisations).where(eq(organisations.id, callerOf(res).organisationId));
    res.json(rows[0]);
  });

  router.patch('/organisation', requireSession(ctx), requireAdmin, validateBody(UpdateOrganisationSchema), async (_req, res) => {
    const caller = callerOf(res);
    const changes = res.locals.body as z.infer<typeof UpdateOrganisationSchema>;
    const actor = await memberActor(ctx.database.db, caller);
    const updated = await ctx.database.db.transaction(async (tx) => {
      const [before] = await tx.select(columns).from(organisations).where(eq(organisations.id, caller.organisationId)).for('update');
      const [after] = await tx.update(organisations).set(changes).where(eq(organisations.id, caller.organisationId)).returning(columns);
      await recordAudit(tx, {
        organisationId: caller.organisationId,
        actor,
        action: 'organisation.defaults_changed',
        targetType: 'organisation',
        targetId: caller.organisationId,
        details: {
          before: { defaultDailyQuota: before?.defaultDailyQuota, defaultBurstPerMinute: before?.defaultBurstPerMinute },
          after: { defaultDailyQuota: after?.defaultDailyQuota, defaultBurstPerMinute: after?.defaultBurstPerMinute },
        },
      });
      return after;
    });
    res.json(updated);
  });

  return router;
}
