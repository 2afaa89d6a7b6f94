import { Router, type Request } from 'express';
import { z } from 'zod';
import type { NextFunction, Response } from 'express';
import {
  CreateSweepJsonSchema,
  DEFAULT_SWEEP_POINTS_PAGE,
  MAX_SWEEP_POINTS_PAGE,
  SweepIdParamsSchema,
  SweepListSchema,
  SweepMultipartSchema,
  SweepPointsPageSchema,
  SweepPointsQuerySchema,
  SweepReadQuerySchema,
  SweepSchema,
  UpdateSweepSchema,
} from '../../../../shared/schemas/sweeps.ts';
import { assertFinite } from '../../../../shared/calculations/finite.ts';
import { FaultDistanceResultSchema, SweepFaultDistanceRequestSchema } from '../../../../shared/schemas/fault.ts';
import { MAX_SWEEP_POINTS } from '../../../../shared/sweep/points.ts';
import type { SweepMask } from '../../../../shared/sweep/analyse.ts';
import { analysedCsvHeader } from '../../../../shared/sweep/csv.ts';
import { pointsFromJson } from '../../../../shared/sweep/prepare.ts';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireCaller } from '../../../auth/caller.ts';
import { calculationGuard, meterCalculation } from '../../../quota/meter.ts';
import { authProblems, keyOrSession } from '../../../auth/openapi.ts';
import { meteredProblems, rateLimitHeaders } from '../../../quota/openapi.ts';
import { ApiError } from '../../../http/problem.ts';
import { input, validateBody, validateParams, validateQuery } from '../../../http/validate.ts';
import { apiErrorFromZod } from '../../../http/zod-issues.ts';
import { calculationProblems, problemResponses, registry, json } from '../../../openapi/registry.ts';
import { deleteSweep, listSweeps, type SweepHeader, type SweepOutline } from './sweeps.repository.ts';
import { indexOfCursor, packedPointSlices, outlineView, rejudgeSweep, storedSweepFaultDistance, storeSweep, sweepOutline, sweepPage, type SweepUpload } from './sweeps.service.ts';
import { MAX_SWEEP_FILE_BYTES, SweepFormFieldsSchema, sweepUpload } from './sweeps.upload.ts';
import type { ExportFormat } from './sweeps.export.ts';
import { formatInWorker } from './sweeps.preparer.ts';

const tags = ['Sweeps'];

function parseOrThrow<S extends z.ZodType>(schema: S, value: unknown): z.infer<S> {
  const parsed = schema.safeParse(value);
  if (!parsed.success) throw apiErrorFromZod(parsed.error, 'body', { schema, input: value });
  return parsed.data;
}

function headerView(h: SweepHeader) {
  return { ...h, createdAt: h.createdAt.toISOString() };
}

/** Points an export streams per database read and write: about 150 KB of CSV, a few milliseconds of work. */
const EXPORT_SLICE_POINTS = 1000;

/** What reading a sweep costs: one calculation unit per page, and an export as many as its points fill pages of the largest size. */
const READ_RULE =
  `One calculation unit per page (at most ${MAX_SWEEP_POINTS_PAGE.toLocaleString('en')} points); a streamed export costs one unit for every ${MAX_SWEEP_POINTS_PAGE.toLocaleString('en')} points it holds (at least one).`;

function exportUnits(pointCount: number): number {
  return Math.max(1, Math.ceil(pointCount / MAX_SWEEP_POINTS_PAGE));
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
    'A file that cannot be read is a 400 problem naming the line and what is wrong there. Reading and analysing run off the server\'s event loop, so a large upload does not hold up other requests. ' +
    `The answer holds the summary and the first ${DEFAULT_SWEEP_POINTS_PAGE.toLocaleString('en')} analysed points with \`nextCursor\` for the rest (GET /api/v1/sweeps/{id}/points). One calculation unit.`,
  security: keyOrSession,
  request: {
    body: {
      required: true,
      content: { 'multipart/form-data': { schema: SweepMultipartSchema }, 'application/json': { schema: CreateSweepJsonSchema } },
    },
  },
  responses: {
    201: { description: 'The stored sweep with the first page of analysed points.', headers: rateLimitHeaders, ...json(SweepSchema) },
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
  description: `Summaries and verdicts without the points, newest first. ${READ_RULE.split(';')[0]}: the list is one page.`,
  security: keyOrSession,
  responses: { 200: { description: 'The sweeps.', headers: rateLimitHeaders, ...json(SweepListSchema) }, ...meteredProblems },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/sweeps/{id}',
  operationId: 'getSweep',
  tags,
  summary: 'One sweep with the first page of its analysed points',
  description:
    `The summary, the verdict and the first page of analysed points (\`limit\`, default ${DEFAULT_SWEEP_POINTS_PAGE.toLocaleString('en')}) with \`nextCursor\` for the next page; with \`fields=summary\` no points. ` +
    `A sweep holds at most ${MAX_SWEEP_POINTS.toLocaleString('en')} points. One calculation unit (one page).`,
  security: keyOrSession,
  request: { params: SweepIdParamsSchema, query: SweepReadQuerySchema },
  responses: { 200: { description: 'The sweep.', headers: rateLimitHeaders, ...json(SweepSchema) }, ...problemResponses.validation, ...meteredProblems, ...problemResponses.notFound },
});

const NDJSON_EXAMPLE =
  '{"frequencyHz":7100000,"loadOhm":{"re":50.4,"im":1.2},"reflection":{"re":0.0039,"im":0.0119,"magnitude":0.0125,"angleDeg":71.8},"swr":1.0253,"returnLossDb":38.06}\n';
const CSV_EXAMPLE = 'frequency_hz,r_ohm,x_ohm,reflection_re,reflection_im,reflection_magnitude,reflection_angle_deg,swr,return_loss_db\r\n7100000,50.4,1.2,0.0039,0.0119,0.0125,71.8,1.0253,38.06\r\n';

registry.registerPath({
  method: 'get',
  path: '/api/v1/sweeps/{id}/points',
  operationId: 'listSweepPoints',
  tags,
  summary: 'A sweep\'s analysed points, a page at a time or streamed whole',
  description:
    `JSON (the default): one page of at most \`limit\` points (1 to ${MAX_SWEEP_POINTS_PAGE.toLocaleString('en')}, default ${DEFAULT_SWEEP_POINTS_PAGE.toLocaleString('en')}) from \`cursor\`, and \`nextCursor\` for the next one (\`null\` after the last point); following the cursors visits every point once, by increasing frequency. ` +
    'With `Accept: text/csv` or `Accept: application/x-ndjson` (or `format=csv`/`format=ndjson`) every point is streamed instead, as the CSV of GET /api/v1/sweeps/{id}/points.csv or as one JSON `AnalysedPoint` per line; the server reads and writes it in slices at the pace the client reads. ' +
    READ_RULE,
  security: keyOrSession,
  request: { params: SweepIdParamsSchema, query: SweepPointsQuerySchema },
  responses: {
    200: {
      description: 'A page of points, or every point as CSV or NDJSON.',
      headers: rateLimitHeaders,
      content: {
        'application/json': { schema: SweepPointsPageSchema },
        'text/csv': { schema: z.string().meta({ example: CSV_EXAMPLE }) },
        'application/x-ndjson': { schema: z.string().meta({ example: NDJSON_EXAMPLE }) },
      },
    },
    ...problemResponses.validation,
    ...meteredProblems,
    ...problemResponses.notFound,
  },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/sweeps/{id}/points.csv',
  operationId: 'exportSweepPoints',
  tags,
  summary: 'The analysed points as CSV',
  description:
    'RFC 4180 CSV with CRLF line ends and a header row: `frequency_hz, r_ohm, x_ohm, reflection_re, reflection_im, reflection_magnitude, reflection_angle_deg, swr, return_loss_db`. Unbounded figures and an open circuit\'s impedance are empty cells. POST /api/v1/sweeps reads such a file back. ' +
    `Streamed in slices at the pace the client reads. ${READ_RULE.split('; ')[1]!.replace(/^a/, 'A')}`,
  security: keyOrSession,
  request: { params: SweepIdParamsSchema },
  responses: {
    200: {
      description: 'The CSV file.',
      headers: rateLimitHeaders,
      content: { 'text/csv': { schema: z.string().meta({ example: CSV_EXAMPLE }) } },
    },
    ...problemResponses.validation,
    ...meteredProblems,
    ...problemResponses.notFound,
  },
});

registry.registerPath({
  method: 'patch',
  path: '/api/v1/sweeps/{id}',
  operationId: 'updateSweep',
  tags,
  summary: 'Judge a stored sweep by another threshold or acceptance figure',
  description: 'Sets `thresholdSwr` and/or `mask` (`null` removes the mask); the bands, the summary and the verdict are worked out again from the stored points, which never change. One calculation unit.',
  security: keyOrSession,
  request: { params: SweepIdParamsSchema, body: { required: true, ...json(UpdateSweepSchema) } },
  responses: {
    200: { description: 'The sweep as judged now, with the first page of analysed points.', headers: rateLimitHeaders, ...json(SweepSchema) },
    ...problemResponses.validation,
    ...problemResponses.unprocessable,
    ...meteredProblems,
    ...problemResponses.notFound,
  },
});

registry.registerPath({
  method: 'delete',
  path: '/api/v1/sweeps/{id}',
  operationId: 'deleteSweep',
  tags,
  summary: 'Delete a sweep',
  description: 'One calculation unit.',
  security: keyOrSession,
  request: { params: SweepIdParamsSchema },
  responses: { 204: { description: 'Deleted.', headers: rateLimitHeaders }, ...problemResponses.validation, ...meteredProblems, ...problemResponses.notFound },
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

/**
 * The sweep and its options from the upload's body: a file with text option fields
 * (multipart/form-data), or JSON points with JSON options.
 */
function uploadOf(req: Request): SweepUpload {
  if (req.is('multipart/form-data')) {
    const { format, ...options } = parseOrThrow(SweepFormFieldsSchema, { ...(req.body as Record<string, unknown>) });
    if (!req.file) {
      throw new ApiError('validation', 'The upload has no file; send the sweep in the form field named "file".', { errors: [{ field: 'file', message: 'required' }] });
    }
    const fileName = req.file.originalname || null;
    // Read in a worker thread by storeSweep.
    return { ...maskAsSweepMask(options), file: req.file.buffer, fileName, format };
  }
  if (req.is('application/json')) {
    const { points, ...options } = parseOrThrow(CreateSweepJsonSchema, req.body ?? {});
    const referenceOhm = options.referenceOhm ?? 50;
    return { ...maskAsSweepMask(options), sourceFormat: 'json', fileName: null, referenceOhm, measured: pointsFromJson(points, referenceOhm) };
  }
  throw new ApiError('unsupportedMediaType', 'Upload a file as multipart/form-data (field "file"), or send JSON points with Content-Type: application/json.');
}

/** The schema's refinement makes a mask one of the two forms SweepMask names. */
function maskAsSweepMask<O extends { mask?: unknown }>(options: O): Omit<O, 'mask'> & { mask: SweepMask | null } {
  return { ...options, mask: (options.mask ?? null) as SweepMask | null };
}

/** Characters safe in a Content-Disposition file name on every platform. */
function fileNameFor(name: string): string {
  const safe = name.normalize('NFKD').replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^-+|-+$/g, '').slice(0, 80);
  return `${safe || 'sweep'}.csv`;
}

interface ExportLocals {
  exportFormat?: ExportFormat | 'json';
  sweepOutline?: SweepOutline;
}

/** `format` when given, else what `Accept` prefers (JSON pages unless CSV or NDJSON is asked for). */
function exportFormatOf(req: Request, format: 'json' | 'csv' | 'ndjson' | undefined): ExportFormat | 'json' {
  if (format) return format;
  const preferred = req.accepts(['application/json', 'text/csv', 'application/x-ndjson']);
  return preferred === 'text/csv' ? 'csv' : preferred === 'application/x-ndjson' ? 'ndjson' : 'json';
}

/** Resolves once the response can take more, or is closed. */
function drained(res: Response): Promise<void> {
  return new Promise((resolve) => {
    const done = () => {
      res.off('drain', done);
      res.off('close', done);
      resolve();
    };
    res.on('drain', done);
    res.on('close', done);
  });
}

/**
 * Writes an export slice by slice, waiting for the client to take each one (backpressure): memory
 * holds a slice or two, whatever the sweep's size. Each slice is formatted in the worker thread
 * while the next is read from the database. A failure after the first bytes can only cut the answer
 * short, so the connection is closed and the client sees an incomplete body.
 */
async function streamExport(res: Response, format: ExportFormat, outline: SweepOutline, slices: AsyncGenerator<Buffer>): Promise<void> {
  const first = await slices.next();
  if (format === 'csv') res.status(200).type('text/csv; charset=utf-8').attachment(fileNameFor(outline.name));
  else res.status(200).type('application/x-ndjson; charset=utf-8');
  if (format === 'csv') res.write(analysedCsvHeader());
  try {
    let slice = first;
    while (!slice.done && !res.destroyed) {
      const [chunk, next] = await Promise.all([formatInWorker(slice.value, outline.referenceOhm, format), slices.next()]);
      if (!res.write(chunk)) await drained(res);
      slice = next;
    }
  } catch (err) {
    res.destroy(err instanceof Error ? err : new Error(String(err)));
    return;
  } finally {
    await slices.return(undefined);
  }
  if (!res.destroyed) res.end();
}

/** Uploaded sweeps of an organisation. */
export function sweepsRouter(ctx: AppContext): Router {
  const router = Router();
  const db = ctx.database.db;
  const caller = requireCaller(ctx);

  router.post('/sweeps', ...calculationGuard(ctx, 'sweeps'), sweepUpload, async (req, res) => {
    const who = callerOf(res);
    const stored = await storeSweep(db, { organisationId: who.organisationId, createdBy: who.userId, ...uploadOf(req) });
    res.status(201).location(`/api/v1/sweeps/${stored.id}`).json(stored);
  });

  router.get('/sweeps', ...calculationGuard(ctx, 'sweepList'), async (_req, res) => {
    res.json({ sweeps: (await listSweeps(db, callerOf(res).organisationId)).map(headerView) });
  });

  router.get('/sweeps/:id', ...calculationGuard(ctx, 'sweepRead'), validateParams(SweepIdParamsSchema), validateQuery(SweepReadQuerySchema), async (_req, res) => {
    const { id } = input(res, SweepIdParamsSchema);
    const query = input(res, SweepReadQuerySchema);
    const q = { organisationId: callerOf(res).organisationId, id };
    if (query.fields === 'summary') {
      const outline = await sweepOutline(db, q);
      if (!outline) throw notFound();
      res.json(outlineView(outline));
      return;
    }
    const page = await sweepPage(db, q, { start: 0, limit: query.limit ?? DEFAULT_SWEEP_POINTS_PAGE });
    if (!page) throw notFound();
    res.json({ ...outlineView(page.outline), points: page.points, nextCursor: page.nextCursor });
  });

  // An export's units depend on the sweep's size, so the sweep is looked up before it is metered.
  const exportMeter = meterCalculation(ctx, 'sweepExport', (_req, res) => exportUnits((res.locals as ExportLocals).sweepOutline!.pointCount));
  const pageMeter = meterCalculation(ctx, 'sweepPoints');
  const lookUpExport = async (res: Response, next: NextFunction) => {
    const outline = await sweepOutline(db, { organisationId: callerOf(res).organisationId, id: input(res, SweepIdParamsSchema).id });
    if (!outline) throw notFound();
    (res.locals as ExportLocals).sweepOutline = outline;
    exportMeter(res.req, res, next);
  };

  router.get('/sweeps/:id/points', caller, validateParams(SweepIdParamsSchema), validateQuery(SweepPointsQuerySchema), async (req, res, next) => {
    const format = exportFormatOf(req, input(res, SweepPointsQuerySchema).format);
    (res.locals as ExportLocals).exportFormat = format;
    if (format === 'json') pageMeter(req, res, next);
    else await lookUpExport(res, next);
  }, async (_req, res) => {
    const locals = res.locals as ExportLocals;
    const q = { organisationId: callerOf(res).organisationId, id: input(res, SweepIdParamsSchema).id };
    if (locals.exportFormat !== 'json') {
      await streamExport(res, locals.exportFormat!, locals.sweepOutline!, packedPointSlices(db, q, locals.sweepOutline!, EXPORT_SLICE_POINTS));
      return;
    }
    const query = input(res, SweepPointsQuerySchema);
    const page = await sweepPage(db, q, { start: indexOfCursor(query.cursor), limit: query.limit ?? DEFAULT_SWEEP_POINTS_PAGE });
    if (!page) throw notFound();
    res.json({ points: page.points, nextCursor: page.nextCursor });
  });

  router.get('/sweeps/:id/points.csv', caller, validateParams(SweepIdParamsSchema), (_req, res, next) => lookUpExport(res, next), async (_req, res) => {
    const outline = (res.locals as ExportLocals).sweepOutline!;
    const q = { organisationId: callerOf(res).organisationId, id: outline.id };
    await streamExport(res, 'csv', outline, packedPointSlices(db, q, outline, EXPORT_SLICE_POINTS));
  });

  router.post(
    '/sweeps/:id/fault-distance',
    ...calculationGuard(ctx, 'sweepFaultDistance'),
    validateParams(SweepIdParamsSchema),
    validateBody(SweepFaultDistanceRequestSchema),
    async (_req, res) => {
      const { id } = input(res, SweepIdParamsSchema);
      const result = await storedSweepFaultDistance(db, { organisationId: callerOf(res).organisationId, id }, input(res, SweepFaultDistanceRequestSchema));
      if (!result) throw notFound();
      res.json(assertFinite(result));
    },
  );

  router.patch('/sweeps/:id', ...calculationGuard(ctx, 'sweepJudge'), validateParams(SweepIdParamsSchema), validateBody(UpdateSweepSchema), async (_req, res) => {
    const { id } = input(res, SweepIdParamsSchema);
    const change = input(res, UpdateSweepSchema);
    // The schema's refinement makes a mask one of the two forms SweepMask names.
    const q = { organisationId: callerOf(res).organisationId, id };
    if (!(await rejudgeSweep(db, q, { thresholdSwr: change.thresholdSwr, mask: change.mask as SweepMask | null | undefined }))) throw notFound();
    const page = await sweepPage(db, q, { start: 0, limit: DEFAULT_SWEEP_POINTS_PAGE });
    if (!page) throw notFound();
    res.json({ ...outlineView(page.outline), points: page.points, nextCursor: page.nextCursor });
  });

  router.delete('/sweeps/:id', ...calculationGuard(ctx, 'sweepDelete'), validateParams(SweepIdParamsSchema), async (_req, res) => {
    const { id } = input(res, SweepIdParamsSchema);
    if (!(await deleteSweep(db, { organisationId: callerOf(res).organisationId, id }))) throw notFound();
    res.status(204).end();
  });

  return router;
}
