import { Router, type RequestHandler } from 'express';
import { z } from '../../../zod.ts';
import { assertFinite } from '../../../../shared/calculations/finite.ts';
import { CABLE_CATALOG, cableLossDbPer100m, findCable, type CableType } from '../../../../shared/rf/cables.ts';
import { M_PER_FT } from '../../../../shared/rf/constants.ts';
import { CableAttenuationQuerySchema, CableAttenuationSchema, CableIdParamsSchema } from '../../../../shared/schemas/calculations.ts';
import {
  AccountCableIdParamsSchema,
  accountCableIdFrom,
  CableEntrySchema,
  CableListSchema,
  CreateAccountCableSchema,
  UpdateAccountCableSchema,
} from '../../../../shared/schemas/cables.ts';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireAdmin, requireCaller, requireSession } from '../../../auth/caller.ts';
import { calculationGuard } from '../../../quota/meter.ts';
import { authProblems, keyOrSession, sessionOnly } from '../../../auth/openapi.ts';
import { meteredProblems, rateLimitHeaders } from '../../../quota/openapi.ts';
import { ApiError } from '../../../http/problem.ts';
import { input, validateBody, validateParams, validateQuery } from '../../../http/validate.ts';
import { calculationProblems, problemResponses, registry, json } from '../../../openapi/registry.ts';
import { findAccountCables, listAccountCables } from './cables.repository.ts';
import { addAccountCable, changeAccountCable, removeAccountCable } from './cables.service.ts';

declare global {
  namespace Express {
    interface Locals {
      /** The cable of the `:id` in the path (catalog or account), found by `findOr404`. */
      cable?: Entry;
    }
  }
}

const tags = ['Cables'];

type Entry = z.input<typeof CableEntrySchema>;
const catalogEntry = (c: CableType): Entry => ({ ...c, origin: 'catalog' });
const accountEntry = (c: CableType & { updatedAt: string }): Entry => ({ ...c, origin: 'account' });

registry.registerPath({
  method: 'get',
  path: '/api/v1/cables',
  operationId: 'listCables',
  tags,
  summary: 'The cable catalog and your organisation\'s cables',
  description:
    'Generic cable types by trade designation (`origin: "catalog"`), with impedance, velocity factor, attenuation model, voltage rating where known, and the source of each entry; then the cables admins of your organisation defined (`origin: "account"`, ids starting with `account-`). Any of these ids works as `cableId` everywhere. One calculation unit (the list is one page).',
  security: keyOrSession,
  responses: { 200: { description: 'Every cable you can use.', headers: rateLimitHeaders, ...json(CableListSchema) }, ...meteredProblems },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/cables/{id}',
  operationId: 'getCable',
  tags,
  summary: 'One cable',
  description: 'One calculation unit.',
  security: keyOrSession,
  request: { params: CableIdParamsSchema },
  responses: { 200: { description: 'The cable.', headers: rateLimitHeaders, ...json(CableEntrySchema) }, ...problemResponses.validation, ...meteredProblems, ...problemResponses.notFound },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/cables/{id}/attenuation',
  operationId: 'getCableAttenuation',
  tags,
  summary: 'Matched loss of a cable at a frequency',
  security: keyOrSession,
  request: { params: CableIdParamsSchema, query: CableAttenuationQuerySchema },
  responses: {
    200: { description: 'Loss per 100 m / 100 ft, and for the given length.', headers: rateLimitHeaders, ...json(CableAttenuationSchema) },
    ...problemResponses.notFound,
    ...calculationProblems,
    ...meteredProblems,
  },
});

registry.registerPath({
  method: 'post',
  path: '/api/v1/cables',
  operationId: 'createCable',
  tags,
  summary: 'Define a cable for your organisation (admins)',
  description:
    'The cable becomes usable as `cableId` in every calculation, batch, feed line and sweep of your organisation. Its id starts with `account-` so it never collides with a catalog id; without `id`, one is made from the designation.',
  security: sessionOnly,
  request: { body: { required: true, ...json(CreateAccountCableSchema) } },
  responses: {
    201: { description: 'The cable.', ...json(CableEntrySchema) },
    ...problemResponses.validation,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...authProblems.conflict,
  },
});

registry.registerPath({
  method: 'patch',
  path: '/api/v1/cables/{id}',
  operationId: 'updateCable',
  tags,
  summary: 'Change one of your organisation\'s cables (admins)',
  description: 'Feed lines on the cable use the new figures from then on; sweeps already stored keep the points they were moved to.',
  security: sessionOnly,
  request: { params: AccountCableIdParamsSchema, body: { required: true, ...json(UpdateAccountCableSchema) } },
  responses: {
    200: { description: 'The cable after the change.', ...json(CableEntrySchema) },
    ...problemResponses.validation,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...problemResponses.notFound,
  },
});

registry.registerPath({
  method: 'delete',
  path: '/api/v1/cables/{id}',
  operationId: 'deleteCable',
  tags,
  summary: 'Remove one of your organisation\'s cables (admins)',
  description: 'Refused (409) while a saved feed line uses the cable; the problem names those feed lines.',
  security: sessionOnly,
  request: { params: AccountCableIdParamsSchema },
  responses: {
    204: { description: 'Removed.' },
    ...problemResponses.validation,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...problemResponses.notFound,
    ...authProblems.conflict,
  },
});

const notFound = (id: string) => new ApiError('notFound', `No cable '${id}' in the catalog or your organisation; GET /api/v1/cables lists the available ids.`);

/** The cable catalog, account cables, and cable attenuation. */
export function cablesRouter(ctx: AppContext): Router {
  const router = Router();
  const db = ctx.database.db;
  const admin = [requireSession(ctx), requireAdmin];

  router.get('/cables', ...calculationGuard(ctx, 'cableList'), async (_req, res) => {
    const own = await listAccountCables(db, callerOf(res).organisationId);
    res.json({ cables: [...CABLE_CATALOG.map(catalogEntry), ...own.map(accountEntry)] });
  });

  const findOr404: RequestHandler = async (_req, res, next) => {
    const { id } = input(res, CableIdParamsSchema);
    const catalog = findCable(id);
    if (catalog) {
      res.locals.cable = catalogEntry(catalog);
    } else {
      const [own] = await findAccountCables(db, callerOf(res).organisationId, [id]);
      if (!own) throw notFound(id);
      res.locals.cable = accountEntry(own);
    }
    next();
  };

  router.get('/cables/:id', ...calculationGuard(ctx, 'cableRead'), validateParams(CableIdParamsSchema), findOr404, (_req, res) => {
    res.json(res.locals.cable!);
  });

  router.get(
    '/cables/:id/attenuation',
    ...calculationGuard(ctx, 'cableAttenuation'),
    validateParams(CableIdParamsSchema),
    findOr404,
    validateQuery(CableAttenuationQuerySchema),
    (_req, res) => {
      const { frequencyHz, lengthM, lengthFt } = input(res, CableAttenuationQuerySchema);
      const cable = res.locals.cable!;
      const lossDbPer100m = cableLossDbPer100m(cable, frequencyHz);
      const length = lengthM ?? (lengthFt === undefined ? undefined : lengthFt * M_PER_FT);
      const body: z.input<typeof CableAttenuationSchema> = {
        cableId: cable.id,
        frequencyHz,
        lossDbPer100m,
        lossDbPer100ft: lossDbPer100m * M_PER_FT,
        ...(length === undefined ? {} : { lengthM: length, lossDb: (lossDbPer100m * length) / 100 }),
      };
      res.json(assertFinite(body));
    },
  );

  router.post('/cables', ...admin, validateBody(CreateAccountCableSchema), async (_req, res) => {
    const { id, ...values } = input(res, CreateAccountCableSchema);
    const cableId = id ?? accountCableIdFrom(values.designation);
    const created = await addAccountCable(db, callerOf(res), cableId, values);
    if (!created) {
      throw new ApiError('conflict', `Your organisation already has a cable '${cableId}'; choose another id (field id) or change that cable with PATCH /api/v1/cables/${cableId}.`, {
        errors: [{ field: 'id', message: `'${cableId}' is taken` }],
      });
    }
    res.status(201).json(accountEntry(created.cable));
  });

  router.patch('/cables/:id', ...admin, validateParams(AccountCableIdParamsSchema), validateBody(UpdateAccountCableSchema), async (_req, res) => {
    const { id } = input(res, AccountCableIdParamsSchema);
    const updated = await changeAccountCable(db, callerOf(res), id, input(res, UpdateAccountCableSchema));
    if (!updated) throw notFound(id);
    res.json(accountEntry(updated.cable));
  });

  router.delete('/cables/:id', ...admin, validateParams(AccountCableIdParamsSchema), async (_req, res) => {
    const { id } = input(res, AccountCableIdParamsSchema);
    if (!(await removeAccountCable(db, callerOf(res), id))) throw notFound(id);
    res.status(204).end();
  });

  return router;
}
