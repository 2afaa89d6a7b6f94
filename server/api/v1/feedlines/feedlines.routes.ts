import { Router, type RequestHandler } from 'express';
import type { z } from 'zod';
import { assertFinite } from '../../../../shared/calculations/finite.ts';
import { feedlineLengthM } from '../../../../shared/calculations/feedlines.ts';
import {
  CreateFeedlineSchema,
  FeedlineIdParamsSchema,
  FeedlineLineRequestSchema,
  FeedlineLineResultSchema,
  FeedlineListSchema,
  FeedlineReferRequestSchema,
  FeedlineReferResultSchema,
  FeedlineSchema,
  UpdateFeedlineSchema,
} from '../../../../shared/schemas/feedlines.ts';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireCaller } from '../../../auth/caller.ts';
import { calculationGuard } from '../../../quota/meter.ts';
import { authProblems, keyOrSession } from '../../../auth/openapi.ts';
import { meteredProblems, rateLimitHeaders } from '../../../quota/openapi.ts';
import { ApiError } from '../../../http/problem.ts';
import { input, validateBody, validateParams } from '../../../http/validate.ts';
import { calculationProblems, problemResponses, registry, json } from '../../../openapi/registry.ts';
import { deleteFeedline, findFeedline, insertFeedline, listFeedlines, updateFeedline, type FeedlineRecord } from './feedlines.repository.ts';
import { assertFeedlineCablesKnown, referThroughFeedline, transformThroughFeedline } from './feedlines.service.ts';

declare global {
  namespace Express {
    interface Locals {
      /** The feed line of the `:id` in the path, loaded by `load`. */
      feedline?: FeedlineRecord;
    }
  }
}

const tags = ['Feed lines'];
const params = { params: FeedlineIdParamsSchema };

function view(f: FeedlineRecord): z.input<typeof FeedlineSchema> {
  return { id: f.id, name: f.name, notes: f.notes, sections: f.sections, lengthM: feedlineLengthM(f.sections), createdAt: f.createdAt.toISOString(), updatedAt: f.updatedAt.toISOString() };
}

const notFound = () => new ApiError('notFound', 'No feed line with that id in your organisation; GET /api/v1/feedlines lists them.');

registry.registerPath({
  method: 'get',
  path: '/api/v1/feedlines',
  operationId: 'listFeedlines',
  tags,
  summary: 'List your organisation\'s saved feed lines',
  description: 'One calculation unit (the list is one page).',
  security: keyOrSession,
  responses: { 200: { description: 'Feed lines, oldest first.', headers: rateLimitHeaders, ...json(FeedlineListSchema) }, ...meteredProblems },
});

registry.registerPath({
  method: 'post',
  path: '/api/v1/feedlines',
  operationId: 'createFeedline',
  tags,
  summary: 'Save a feed line',
  description:
    'Describe a station\'s feed line once, as ordered sections from the transmitter end (cables of the catalog or your organisation, custom lines, connectors and adapters as fixed losses), then refer meter readings or transform loads through it by id.',
  security: keyOrSession,
  request: { body: { required: true, ...json(CreateFeedlineSchema) } },
  responses: {
    201: { description: 'The saved feed line.', ...json(FeedlineSchema) },
    ...problemResponses.validation,
    ...problemResponses.unprocessable,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
  },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/feedlines/{id}',
  operationId: 'getFeedline',
  tags,
  summary: 'One saved feed line',
  description: 'One calculation unit.',
  security: keyOrSession,
  request: params,
  responses: { 200: { description: 'The feed line.', headers: rateLimitHeaders, ...json(FeedlineSchema) }, ...problemResponses.validation, ...meteredProblems, ...problemResponses.notFound },
});

registry.registerPath({
  method: 'patch',
  path: '/api/v1/feedlines/{id}',
  operationId: 'updateFeedline',
  tags,
  summary: 'Change a saved feed line',
  description: '`sections`, when sent, replaces all sections. Sweeps already moved through the feed line keep their points.',
  security: keyOrSession,
  request: { ...params, body: { required: true, ...json(UpdateFeedlineSchema) } },
  responses: {
    200: { description: 'The feed line after the change.', ...json(FeedlineSchema) },
    ...problemResponses.validation,
    ...problemResponses.unprocessable,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...problemResponses.notFound,
  },
});

registry.registerPath({
  method: 'delete',
  path: '/api/v1/feedlines/{id}',
  operationId: 'deleteFeedline',
  tags,
  summary: 'Delete a saved feed line',
  description: 'Sweeps moved through it keep their points and a copy of its sections.',
  security: keyOrSession,
  request: params,
  responses: { 204: { description: 'Deleted.' }, ...problemResponses.validation, ...authProblems.unauthenticated, ...authProblems.forbidden, ...problemResponses.notFound },
});

registry.registerPath({
  method: 'post',
  path: '/api/v1/feedlines/{id}/line',
  operationId: 'transformThroughFeedline',
  tags,
  summary: 'Transform a load through a saved feed line',
  description:
    'As POST /api/v1/line, with the saved sections cascaded: the load is carried through each section in turn (exact lossy-line solution), a connector being a matched fixed loss. Totals are end to end; `sections` has each section on its own. One calculation unit.',
  security: keyOrSession,
  request: { ...params, body: { required: true, ...json(FeedlineLineRequestSchema) } },
  responses: {
    200: { description: 'The result, in full double precision; unbounded values are `null`.', headers: rateLimitHeaders, ...json(FeedlineLineResultSchema) },
    ...calculationProblems,
    ...meteredProblems,
    ...problemResponses.notFound,
  },
});

registry.registerPath({
  method: 'post',
  path: '/api/v1/feedlines/{id}/refer',
  operationId: 'referReadingThroughFeedline',
  tags,
  summary: 'Refer a reading between the two ends of a saved feed line',
  description:
    'As POST /api/v1/refer, with the matched loss of the saved feed line at the frequency (the sum of its sections\' matched losses, connectors included). Readings that the stated loss cannot explain are a 422 problem. One calculation unit.',
  security: keyOrSession,
  request: { ...params, body: { required: true, ...json(FeedlineReferRequestSchema) } },
  responses: {
    200: { description: 'Figures at both ends.', headers: rateLimitHeaders, ...json(FeedlineReferResultSchema) },
    ...calculationProblems,
    ...meteredProblems,
    ...problemResponses.notFound,
  },
});

/** Saved feed lines of an organisation and the calculations through them. */
export function feedlinesRouter(ctx: AppContext): Router {
  const router = Router();
  const db = ctx.database.db;
  const caller = requireCaller(ctx);

  const load: RequestHandler = async (_req, res, next) => {
    const { id } = input(res, FeedlineIdParamsSchema);
    const found = await findFeedline(db, { organisationId: callerOf(res).organisationId, id });
    if (!found) throw notFound();
    res.locals.feedline = found;
    next();
  };

  router.get('/feedlines', ...calculationGuard(ctx, 'feedlineList'), async (_req, res) => {
    res.json({ feedlines: (await listFeedlines(db, callerOf(res).organisationId)).map(view) });
  });

  router.post('/feedlines', caller, validateBody(CreateFeedlineSchema), async (_req, res) => {
    const who = callerOf(res);
    const body = input(res, CreateFeedlineSchema);
    await assertFeedlineCablesKnown(db, who.organisationId, body.sections);
    const created = await insertFeedline(db, { organisationId: who.organisationId, createdBy: who.userId, ...body });
    res.status(201).json(view(created));
  });

  router.get('/feedlines/:id', ...calculationGuard(ctx, 'feedlineRead'), validateParams(FeedlineIdParamsSchema), load, (_req, res) => {
    res.json(view(res.locals.feedline!));
  });

  router.patch('/feedlines/:id', caller, validateParams(FeedlineIdParamsSchema), validateBody(UpdateFeedlineSchema), async (_req, res) => {
    const who = callerOf(res);
    const { id } = input(res, FeedlineIdParamsSchema);
    const changes = input(res, UpdateFeedlineSchema);
    if (changes.sections) await assertFeedlineCablesKnown(db, who.organisationId, changes.sections);
    const updated = await updateFeedline(db, { organisationId: who.organisationId, id }, changes);
    if (!updated) throw notFound();
    res.json(view(updated));
  });

  router.delete('/feedlines/:id', caller, validateParams(FeedlineIdParamsSchema), async (_req, res) => {
    const { id } = input(res, FeedlineIdParamsSchema);
    if (!(await deleteFeedline(db, { organisationId: callerOf(res).organisationId, id }))) throw notFound();
    res.status(204).end();
  });

  router.post(
    '/feedlines/:id/line',
    ...calculationGuard(ctx, 'feedlineLine'),
    validateParams(FeedlineIdParamsSchema),
    validateBody(FeedlineLineRequestSchema),
    load,
    async (_req, res) => {
      const result = await transformThroughFeedline(db, callerOf(res).organisationId, res.locals.feedline!.sections, input(res, FeedlineLineRequestSchema));
      res.json(assertFinite(result));
    },
  );

  router.post(
    '/feedlines/:id/refer',
    ...calculationGuard(ctx, 'feedlineRefer'),
    validateParams(FeedlineIdParamsSchema),
    validateBody(FeedlineReferRequestSchema),
    load,
    async (_req, res) => {
      const result = await referThroughFeedline(db, callerOf(res).organisationId, res.locals.feedline!.sections, input(res, FeedlineReferRequestSchema));
      res.json(assertFinite(result));
    },
  );

  return router;
}
