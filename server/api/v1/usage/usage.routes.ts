import { Router } from 'express';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireCaller } from '../../../auth/caller.ts';
import { authProblems, keyOrSession } from '../../../auth/openapi.ts';
import { input, validateQuery } from '../../../http/validate.ts';
import { problemResponses, registry } from '../../../openapi/registry.ts';
import { utcDay } from '../../../quota/day.ts';
import { UsageQuerySchema, UsageSchema } from './usage.schemas.ts';
import { usageReport } from './usage.service.ts';

registry.registerPath({
  method: 'get',
  path: '/api/v1/usage',
  operationId: 'getUsage',
  tags: ['Usage'],
  summary: 'Calculation usage per day, endpoint and key',
  description:
    'Developers, and every key, see their own usage: their keys plus their console calls. Admins signed in to the console see the whole organisation, optionally one member or key. ' +
    'Days are UTC. Reading usage spends no quota.',
  security: keyOrSession,
  request: { query: UsageQuerySchema },
  responses: { 200: { description: 'Daily series and breakdowns.', content: { 'application/json': { schema: UsageSchema } } }, ...problemResponses.validation, ...problemResponses.unprocessable, ...authProblems.unauthenticated, ...authProblems.forbidden },
});

export function usageRouter(ctx: AppContext): Router {
  const router = Router();

  router.get('/usage', requireCaller(ctx), validateQuery(UsageQuerySchema), async (_req, res) => {
    // Usage of key calls is buffered for up to a second; this process's own calls are shown at once.
    await ctx.keyServices.leases.flush();
    res.json(await usageReport(ctx.database.db, callerOf(res), input(res, UsageQuerySchema), utcDay(ctx.clock.now())));
  });

  return router;
}
