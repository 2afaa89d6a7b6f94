import { Router } from 'express';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireAdmin, requireCaller, requireSession } from '../../../auth/caller.ts';
import { authProblems, keyOrSession, sessionOnly } from '../../../auth/openapi.ts';
import { input, validateBody } from '../../../http/validate.ts';
import { problemResponses, registry, json } from '../../../openapi/registry.ts';
import { z } from '../../../zod.ts';
import { findOrganisation } from './organisation.repository.ts';
import { updateDefaultLimits } from './organisation.service.ts';

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

export function organisationRouter(ctx: AppContext): Router {
  const router = Router();

  router.get('/organisation', requireCaller(ctx), async (_req, res) => {
    res.json(await findOrganisation(ctx.database.db, callerOf(res).organisationId));
  });

  router.patch('/organisation', requireSession(ctx), requireAdmin, validateBody(UpdateOrganisationSchema), async (_req, res) => {
    res.json(await updateDefaultLimits(ctx.database.db, callerOf(res), input(res, UpdateOrganisationSchema)));
  });

  return router;
}
