import { Router } from 'express';
import type { AppContext } from '../../../context.ts';
import { requireAdmin, requireSession } from '../../../auth/caller.ts';
import { authProblems, sessionOnly } from '../../../auth/openapi.ts';
import { ApiError } from '../../../http/problem.ts';
import { registry } from '../../../openapi/registry.ts';
import { StatusWindow, type ServiceFigures } from '../../../metrics/status-window.ts';
import { z } from '../../../zod.ts';

const ServiceFiguresSchema = z
  .object({
    windowS: z.number().openapi({ description: 'Seconds the rates and shares cover (about the last minute; longer when nobody asked for a while).', example: 58.2 }),
    requestsPerS: z.number().openapi({ description: 'Answered requests per second, every path.', example: 41.5 }),
    serverErrorShare: z.number().openapi({ description: 'Share of answers that were 5xx (0 to 1), shed requests included.', example: 0.002 }),
    refusalShare: z.number().openapi({ description: 'Share of answers that were 429: a burst limit or a daily quota spent.', example: 0.01 }),
    shedPerS: z.number().openapi({ description: 'API requests answered 503 per second because the server was overloaded.', example: 0 }),
    p95LatencyMs: z.number().nullable().openapi({ description: '95th percentile of answer times, from the latency histogram\'s buckets; null without requests.', example: 4.2 }),
    unitsSpentPerS: z.number().openapi({ description: 'Calculation units spent per second.', example: 38.1 }),
    unitsRefusedPerS: z.number().openapi({ description: 'Calculation units refused per second (quota or burst limit).', example: 0.4 }),
    inFlight: z.number().int().openapi({ description: 'API requests under way now.', example: 3 }),
    eventLoopDelayMs: z.number().openapi({ description: 'The event loop\'s recent delay: above SHED_EVENT_LOOP_DELAY_MS new API requests are shed.', example: 0.6 }),
    database: z
      .object({
        connections: z.number().int().openapi({ description: 'Open connections of the serving pool.', example: 4 }),
        inUse: z.number().int().openapi({ description: 'Connections lent to a query now.', example: 1 }),
        idle: z.number().int().openapi({ example: 3 }),
        waiting: z.number().int().openapi({ description: 'Queries waiting for a free connection.', example: 0 }),
        max: z.number().int().openapi({ description: 'Most connections the pool may open.', example: 10 }),
      })
      .openapi('DatabasePoolFigures'),
    uptimeS: z.number().int().openapi({ description: 'Seconds since this server process started.', example: 86_400 }),
  })
  .openapi('ServiceFigures', { description: 'Live figures of the server process that answered (with WORKERS > 1, one worker\'s).' });

registry.registerPath({
  method: 'get',
  path: '/api/v1/status',
  operationId: 'getServiceFigures',
  tags: ['Service'],
  summary: 'Live load figures of this server process (admins)',
  description: 'Request rate, error and refusal shares, p95 latency, units spent, event-loop delay and the database pool, read from the registry behind GET /metrics. Cheap enough to ask every few seconds.',
  security: sessionOnly,
  responses: {
    200: { description: 'The figures.', content: { 'application/json': { schema: ServiceFiguresSchema } } },
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
  },
});

export function statusRouter(ctx: AppContext): Router {
  const router = Router();
  const window = ctx.metrics ? new StatusWindow(ctx.metrics, ctx.clock) : undefined;
  router.get('/status', requireSession(ctx), requireAdmin, async (_req, res) => {
    if (!window) throw new ApiError('notFound', 'This server keeps no metrics.');
    res.setHeader('Cache-Control', 'no-store');
    res.json((await window.figures()) satisfies ServiceFigures);
  });
  return router;
}
