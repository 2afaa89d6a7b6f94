import { Router } from 'express';
import { z } from 'zod';
import type { FeedlineSection } from '../../../../shared/schemas/feedlines.ts';
import {
  CreateSweepJsonSchema,
  SweepIdParamsSchema,
  SweepListSchema,
  SweepMultipartSchema,
  SweepSchema,
  UpdateSweepSchema,
  type SweepOptions,
} from '../../../../shared/schemas/sweeps.ts';
import { FaultDistanceResultSchema, SweepFaultDistanceRequestSchema } from '../../../../shared/schemas/fault.ts';
import { analyseSweep, type SweepMask } from '../../../../shared/sweep/analyse.ts';
import { reflectionSamples } from '../../../../shared/sweep/fault-distance.ts';
import { RfInputError } from '../../../../shared/rf/errors.ts';
import { analysedPointsToCsv } from '../../../../shared/sweep/csv.ts';
import type { AppContext } from '../../../context.ts';
import { callerOf, calculationGuard, requireCaller } from '../../../auth/caller.ts';
import { authProblems, keyOrSession, meteredProblems, rateLimitHeaders } from '../../../auth/openapi.ts';
import { ApiError } from '../../../http/problem.ts';
import { validateBody, validateParams } from '../../../http/validate.ts';
import { apiErrorFromZod } from '../../../http/zod-issues.ts';
import { calculationProblems, problemResponses, registry, json } from '../../../openapi/registry.ts';
import { assertFinite, faultDistanceOf, type FaultOptions } from '../calc/operations.ts';
import { cableIdsIn, calculationEnvFor } from '../cables/cables.env.ts';
import { findFeedline } from '../feedlines/feedlines.repository.ts';
import { deleteSweep, findSweep, insertSweep, listSweeps, updateSweepAnalysis, type SweepHeader, type SweepRecord } from './sweeps.repository.ts';
import { pointsFromJson, prepareSweep, readSweepFile, type SweepMove } from './sweeps.service.ts';
import { unpackPoints, packPoints } from './sweeps.points.ts';
import { MAX_SWEEP_FILE_BYTES, SweepFormFieldsSchema, sweepUpload } from './sweeps.upload.ts';

const tags = ['Sweeps'];

function parseOrThrow<S extends z.ZodType>(schema: S, value: unknown): z.infer<S> {
  const parsed = schema.safeParse(value);
  if (!parsed.success) throw apiErrorFromZod(parsed.error, 'body', { schema, input: value });
  return parsed.data;
}

function headerView(h: SweepHeader) {
  return { ...h, createdAt: h.createdAt.toISOString() };
}

/** The full analysis of a stored sweep, recomputed from its points (deterministic, so it matches the stored summary). */
function analysisOf(record: SweepRecord) {
  const points = unpackPoints(record.movedPoints ?? record.measuredPoints);
  return analyseSweep(points, { referenceOhm: record.referenceOhm, thresholdSwr: record.thresholdSwr, mask: record.mask ?? undefined });
}

function sweepView(record: SweepRecord): z.input<typeof SweepSchema> {
  const { measuredPoints: _m, movedPoints: _p, line, ...header } = record;
  return { ...headerView(header), line, points: analysisOf(record).points };
}

const notFound = () => new ApiError('notFound', 'No sweep with that id in your organisation; GET /api/v1/sweeps lists them.');

registry.registerPath({
  method: 'post',
  path: '/api/v1/sweeps',
  operationId: 'uploadSweep',
  tags,
  summary: 'Upload and analyse a sweep',
  description:
    'A Touchstone one-port file (`.s1p`, version 1 or 2, any option line: Hz/kHz/MHz/GHz, S/Z/Y, MA/DB/RI, R n) or a CSV (`frequency_hz, r_ohm, x_ohm` or `frequency_hz, s11_re, s11_im`) as multipart/form-data in the field `file` ' +
    `(at most ${MAX_SWEEP_FILE_BYTES / 1024 / 1024} MB and 100,000 points), or JSON points. ` +
    'With `line` or `feedlineId` and `direction` the sweep is moved to the other end of the line first. Per point: impedance, Γ, SWR and return loss against `referenceOhm`; ' +
    'a summary (minimum SWR, bands under `thresholdSwr`, resonances) and, with a `mask`, a pass/fail verdict with the worst point. The sweep is stored for your organisation. ' +
    'A file that cannot be read is a 400 problem naming the line and what is wrong there. One calculation unit.',
  security: keyOrSession,
  request: {
    body: {
      required: true,
      content: { 'multipart/form-data': { schema: SweepMultipartSchema }, 'application/json': { schema: CreateSweepJsonSchema } },
    },
  },
  responses: {
    201: { description: 'The stored sweep with every analysed point.', ...json(SweepSchema) },
    ...problemResponses.validation,
    ...problemResponses.tooLarge,
    ...problemResponses.unprocessable,
    ...meteredProblems,
  },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/sweeps',
  operationId: 'listSweeps',
  tags,
  summary: 'List your organisation\'s sweeps',
  description: 'Summaries and verdicts without the points, newest first.',
  security: keyOrSession,
  responses: { 200: { description: 'The sweeps.', ...json(SweepListSchema) }, ...authProblems.unauthenticated },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/sweeps/{id}',
  operationId: 'getSweep',
  tags,
  summary: 'One sweep with every analysed point',
  security: keyOrSession,
  request: { params: SweepIdParamsSchema },
  responses: { 200: { description: 'The sweep.', ...json(SweepSchema) }, ...problemResponses.validation, ...authProblems.unauthenticated, ...problemResponses.notFound },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/sweeps/{id}/points.csv',
  operationId: 'exportSweepPoints',
  tags,
  summary: 'The analysed points as CSV',
  description:
    'RFC 4180 CSV with CRLF line ends and a header row: `frequency_hz, r_ohm, x_ohm, reflection_re, reflection_im, reflection_magnitude, reflection_angle_deg, swr, return_loss_db`. Unbounded figures and an open circuit\'s impedance are empty cells. POST /api/v1/sweeps reads such a file back.',
  security: keyOrSession,
  request: { params: SweepIdParamsSchema },
  responses: {
    200: {
      description: 'The CSV file.',
      content: { 'text/csv': { schema: z.string().meta({ example: 'frequency_hz,r_ohm,x_ohm,reflection_re,reflection_im,reflection_magnitude,reflection_angle_deg,swr,return_loss_db\r\n7100000,50.4,1.2,0.0039,0.0119,0.0125,71.8,1.0253,38.06\r\n' }) } },
    },
    ...problemResponses.validation,
    ...authProblems.unauthenticated,
    ...problemResponses.notFound,
  },
});

registry.registerPath({
  method: 'patch',
  path: '/api/v1/sweeps/{id}',
  operationId: 'updateSweep',
  tags,
  summary: 'Judge a stored sweep by another threshold or acceptance figure',
  description: 'Sets `thresholdSwr` and/or `mask` (`null` removes the mask); the bands, the summary and the verdict are worked out again from the stored points, which never change.',
  security: keyOrSession,
  request: { params: SweepIdParamsSchema, body: { required: true, ...json(UpdateSweepSchema) } },
  responses: {
    200: { description: 'The sweep as judged now, with every analysed point.', ...json(SweepSchema) },
    ...problemResponses.validation,
    ...problemResponses.unprocessable,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...problemResponses.notFound,
  },
});

registry.registerPath({
  method: 'delete',
  path: '/api/v1/sweeps/{id}',
  operationId: 'deleteSweep',
  tags,
  summary: 'Delete a sweep',
  security: keyOrSession,
  request: { params: SweepIdParamsSchema },
  responses: { 204: { description: 'Deleted.' }, ...problemResponses.validation, ...authProblems.unauthenticated, ...authProblems.forbidden, ...problemResponses.notFound },
});

registry.registerPath({
  method: 'post',
  path: '/api/v1/sweeps/{id}/fault-distance',
  operationId: 'computeSweepFaultDistance',
  tags,
  summary: 'Distance to fault from a stored sweep',
  description:
    'As POST /api/v1/fault-distance, on the measured points of a stored sweep (before any move through a line; from any source the upload accepts: Touchstone, CSV or JSON), against its `referenceOhm`. ' +
    'The sweep must be evenly spaced in frequency; one that is not is a 422 saying how far off it is. One calculation unit.',
  security: keyOrSession,
  request: { params: SweepIdParamsSchema, body: { required: true, ...json(SweepFaultDistanceRequestSchema) } },
  responses: {
    200: { description: 'The response against distance, in full double precision; unbounded values are `null`.', headers: rateLimitHeaders, ...json(FaultDistanceResultSchema) },
    ...calculationProblems,
    ...meteredProblems,
    ...problemResponses.notFound,
  },
});

/** Characters safe in a Content-Disposition file name on every platform. */
function fileNameFor(name: string): string {
  const safe = name.normalize('NFKD').replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^-+|-+$/g, '').slice(0, 80);
  return `${safe || 'sweep'}.csv`;
}

/** Uploaded sweeps of an organisation. */
export function sweepsRouter(ctx: AppContext): Router {
  const router = Router();
  const db = ctx.database.db;
  const caller = requireCaller(ctx);

  router.post('/sweeps', ...calculationGuard(ctx, 'sweeps'), sweepUpload, async (req, res) => {
    const who = callerOf(res);
    let options: SweepOptions;
    let measured;
    let referenceOhm: number;
    let sourceFormat: 'touchstone' | 'csv' | 'json';
    let fileName: string | null = null;

    if (req.is('multipart/form-data')) {
      const { format, ...fields } = parseOrThrow(SweepFormFieldsSchema, { ...(req.body as Record<string, unknown>) });
      options = fields;
      if (!req.file) {
        throw new ApiError('validation', 'The upload has no file; send the sweep in the form field named "file".', { errors: [{ field: 'file', message: 'required' }] });
      }
      fileName = req.file.originalname || null;
      const read = readSweepFile(req.file.buffer, { fileName: fileName ?? undefined, format, referenceOhm: fields.referenceOhm });
      measured = read.points;
      referenceOhm = read.referenceOhm;
      sourceFormat = read.format;
    } else if (req.is('application/json')) {
      const { points, ...fields } = parseOrThrow(CreateSweepJsonSchema, req.body ?? {});
      options = fields;
      referenceOhm = fields.referenceOhm ?? 50;
      measured = pointsFromJson(points, referenceOhm);
      sourceFormat = 'json';
    } else {
      throw new ApiError('unsupportedMediaType', 'Upload a file as multipart/form-data (field "file"), or send JSON points with Content-Type: application/json.');
    }

    let move: SweepMove | undefined;
    let feedlineRef: { id: string; name: string } | null = null;
    if (options.feedlineId !== undefined) {
      const feedline = await findFeedline(db, { organisationId: who.organisationId, id: options.feedlineId });
      if (!feedline) {
        throw new ApiError('unprocessable', 'feedlineId: no saved feed line with that id in your organisation; GET /api/v1/feedlines lists them.', {
          errors: [{ field: 'feedlineId', message: 'no saved feed line with that id in your organisation' }],
        });
      }
      feedlineRef = { id: feedline.id, name: feedline.name };
      move = { sections: feedline.sections, direction: options.direction!, field: 'feedlineId', single: false };
    } else if (options.line !== undefined) {
      const single = !Array.isArray(options.line);
      move = { sections: (single ? [options.line] : options.line) as FeedlineSection[], direction: options.direction!, field: 'line', single };
    }
    const env = await calculationEnvFor(db, who.organisationId, cableIdsIn(move?.sections ?? []));
    const mask = (options.mask ?? null) as SweepMask | null;
    const { moved, analysis, thresholdSwr } = prepareSweep(measured, { referenceOhm, thresholdSwr: options.thresholdSwr, mask: mask ?? undefined, move, env });

    const name = options.name ?? (fileName ? fileName.replace(/\.[A-Za-z0-9]+$/, '') || fileName : 'Sweep');
    const stored = await insertSweep(db, {
      organisationId: who.organisationId,
      createdBy: who.userId,
      name,
      sourceFormat,
      fileName,
      referenceOhm,
      thresholdSwr,
      direction: move?.direction ?? null,
      line: move?.sections ?? null,
      feedlineId: feedlineRef?.id ?? null,
      mask,
      pointCount: analysis.summary.pointCount,
      startHz: analysis.summary.startHz,
      stopHz: analysis.summary.stopHz,
      measuredPoints: packPoints(measured),
      movedPoints: moved ? packPoints(moved) : null,
      summary: analysis.summary,
      verdict: analysis.verdict ?? null,
    });
    const body: z.input<typeof SweepSchema> = {
      id: stored.id,
      name,
      sourceFormat,
      fileName,
      referenceOhm,
      thresholdSwr,
      direction: move?.direction ?? null,
      feedline: feedlineRef,
      mask: options.mask ?? null,
      summary: analysis.summary,
      verdict: analysis.verdict ?? null,
      createdAt: stored.createdAt.toISOString(),
      line: move?.sections ?? null,
      points: analysis.points,
    };
    res.status(201).location(`/api/v1/sweeps/${stored.id}`).json(body);
  });

  router.get('/sweeps', caller, async (_req, res) => {
    res.json({ sweeps: (await listSweeps(db, callerOf(res).organisationId)).map(headerView) });
  });

  router.get('/sweeps/:id', caller, validateParams(SweepIdParamsSchema), async (_req, res) => {
    const { id } = res.locals.params as { id: string };
    const record = await findSweep(db, { organisationId: callerOf(res).organisationId, id });
    if (!record) throw notFound();
    res.json(sweepView(record));
  });

  router.get('/sweeps/:id/points.csv', caller, validateParams(SweepIdParamsSchema), async (_req, res) => {
    const { id } = res.locals.params as { id: string };
    const record = await findSweep(db, { organisationId: callerOf(res).organisationId, id });
    if (!record) throw notFound();
    res
      .type('text/csv; charset=utf-8')
      .attachment(fileNameFor(record.name))
      .send(analysedPointsToCsv(analysisOf(record).points));
  });

  router.post(
    '/sweeps/:id/fault-distance',
    ...calculationGuard(ctx, 'sweepFaultDistance'),
    validateParams(SweepIdParamsSchema),
    validateBody(SweepFaultDistanceRequestSchema),
    async (_req, res) => {
      const who = callerOf(res);
      const { id } = res.locals.params as { id: string };
      const options = res.locals.body as FaultOptions;
      const record = await findSweep(db, { organisationId: who.organisationId, id });
      if (!record) throw notFound();
      const env = await calculationEnvFor(db, who.organisationId, cableIdsIn(options.line));
      try {
        const samples = reflectionSamples(unpackPoints(record.measuredPoints), record.referenceOhm);
        res.json(assertFinite(faultDistanceOf(samples, options, env)));
      } catch (err) {
        // The points are not in this request: a problem with them is addressed to the sweep.
        if (err instanceof RfInputError && err.field.startsWith('points')) throw new RfInputError('id', `in the stored sweep${err.field === 'points' ? '' : `, ${err.field.replace(/^points\.(\d+).*/, 'point $1, counting from 0')}`}: ${err.message}`);
        throw err;
      }
    },
  );

  router.patch('/sweeps/:id', caller, validateParams(SweepIdParamsSchema), validateBody(UpdateSweepSchema), async (_req, res) => {
    const { id } = res.locals.params as { id: string };
    const change = res.locals.body as z.output<typeof UpdateSweepSchema>;
    const organisationId = callerOf(res).organisationId;
    const record = await findSweep(db, { organisationId, id });
    if (!record) throw notFound();
    const thresholdSwr = change.thresholdSwr ?? record.thresholdSwr;
    // The schema's refinement makes a mask one of the two forms SweepMask names.
    const mask = change.mask === undefined ? record.mask : (change.mask as SweepMask | null);
    const points = unpackPoints(record.movedPoints ?? record.measuredPoints);
    const { summary, verdict } = analyseSweep(points, { referenceOhm: record.referenceOhm, thresholdSwr, mask: mask ?? undefined });
    if (!(await updateSweepAnalysis(db, { organisationId, id }, { thresholdSwr, mask, summary, verdict: verdict ?? null }))) throw notFound();
    res.json(sweepView({ ...record, thresholdSwr, mask, summary, verdict: verdict ?? null }));
  });

  router.delete('/sweeps/:id', caller, validateParams(SweepIdParamsSchema), async (_req, res) => {
    const { id } = res.locals.params as { id: string };
    if (!(await deleteSweep(db, { organisationId: callerOf(res).organisationId, id }))) throw notFound();
    res.status(204).end();
  });

  return router;
}
