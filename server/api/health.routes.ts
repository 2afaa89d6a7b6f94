import { Router } from 'express';
import { z } from '../zod.ts';
import { registry, problemResponses } from '../openapi/registry.ts';
import { publicAccess } from '../auth/openapi.ts';
import { ApiError } from '../http/problem.ts';
import type { AppContext } from '../context.ts';
import { APP_VERSION } from '../config.ts';
import { pingDatabase } from './health.repository.ts';

const Health = z
  .object({
    status: z.literal('ok'),
    version: z.string().openapi({ example: APP_VERSION }),
    uptimeS: z.number().openapi({ description: 'Seconds since the process started.', example: 12.5 }),
  })
  .openapi('Health');

const Readiness = z
  .object({ status: z.literal('ready'), database: z.literal('up') })
  .openapi('Readiness');

registry.registerPath({
  method: 'get',
  path: '/healthz',
  operationId: 'getHealth',
  security: publicAccess,
  tags: ['Service'],
  summary: 'The process is alive',
  responses: { 200: { description: 'The process answers.', content: { 'application/json': { schema: Health } } } },
});

registry.registerPath({
  method: 'get',
  path: '/readyz',
  operationId: 'getReadiness',
  security: publicAccess,
  tags: ['Service'],
  summary: 'The service can reach its database',
  responses: {
    200: { description: 'Ready to serve.', content: { 'application/json': { schema: Readiness } } },
    ...problemResponses.unavailable,
  },
});

export function healthRouter(ctx: AppContext): Router {
  const router = Router();
  const startedAt = ctx.clock.now().getTime();
  router.get('/healthz', (_req, res) => {
    res.json({ status: 'ok', version: ctx.config.version, uptimeS: (ctx.clock.now().getTime() - startedAt) / 1000 } satisfies z.infer<typeof Health>);
  });
  router.get('/readyz', async (_req, res) => {
    try {
      await pingDatabase(ctx.database.db);
    } catch (err) {
      throw new ApiError('unavailable', 'The database is unreachable; retry shortly.', { headers: { 'Retry-After': '5' }, cause: err });
    }
    res.json({ status: 'ready', database: 'up' } satisfies z.infer<typeof Readiness>);
  });
  return router;
}
