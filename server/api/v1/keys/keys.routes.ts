import { Router } from 'express';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireSession } from '../../../auth/caller.ts';
import { authProblems, sessionOnly } from '../../../auth/openapi.ts';
import { ApiError } from '../../../http/problem.ts';
import { input, validateBody, validateParams, validateQuery } from '../../../http/validate.ts';
import { problemResponses, registry, json } from '../../../openapi/registry.ts';
import { utcDay } from '../../../quota/day.ts';
import { memberActor } from '../members/members.repository.ts';
import { findKey, listKeys } from './keys.repository.ts';
import {
  ApiKeyListSchema,
  ApiKeySchema,
  CreateApiKeySchema,
  CreatedApiKeySchema,
  KeyIdParamsSchema,
  ListKeysQuerySchema,
  UpdateApiKeySchema,
} from './keys.schemas.ts';
import { createKey, revokeKey, updateKey } from './keys.service.ts';

const tags = ['Keys'];

registry.registerPath({
  method: 'get',
  path: '/api/v1/keys',
  operationId: 'listKeys',
  tags,
  summary: 'List keys',
  description: 'Developers see their own keys; admins see every key of the organisation (optionally one owner\'s). Secrets are never listed.',
  security: sessionOnly,
  request: { query: ListKeysQuerySchema },
  responses: { 200: { description: 'The keys, oldest first.', ...json(ApiKeyListSchema) }, ...problemResponses.validation, ...authProblems.unauthenticated, ...authProblems.forbidden },
});

registry.registerPath({
  method: 'post',
  path: '/api/v1/keys',
  operationId: 'createKey',
  tags,
  summary: 'Issue a key',
  description:
    'Issues a key for yourself, or (admins) for any member. The answer holds the secret; it is shown this once. ' +
    'Quota fields are for admins; without them the key gets the organisation defaults. `allowedOrigins` lists the web pages ' +
    'that may use the key from a browser (none by default). Audited.',
  security: sessionOnly,
  request: { body: { required: true, ...json(CreateApiKeySchema) } },
  responses: {
    201: { description: 'The key and its secret (shown once).', ...json(CreatedApiKeySchema) },
    ...problemResponses.validation,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...problemResponses.notFound,
    ...authProblems.conflict,
    ...problemResponses.unprocessable,
  },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/keys/{id}',
  operationId: 'getKey',
  tags,
  summary: 'Read a key',
  security: sessionOnly,
  request: { params: KeyIdParamsSchema },
  responses: { 200: { description: 'The key.', ...json(ApiKeySchema) }, ...problemResponses.validation, ...authProblems.unauthenticated, ...authProblems.forbidden, ...problemResponses.notFound },
});

registry.registerPath({
  method: 'patch',
  path: '/api/v1/keys/{id}',
  operationId: 'updateKey',
  tags,
  summary: 'Rename a key or change its limits',
  description:
    'Owners may change name, note and `allowedOrigins`; only admins may change `dailyQuota` and `burstPerMinute` (audited). ' +
    'New limits and origins apply from the next request, on every server.',
  security: sessionOnly,
  request: { params: KeyIdParamsSchema, body: { required: true, ...json(UpdateApiKeySchema) } },
  responses: {
    200: { description: 'The key after the change.', ...json(ApiKeySchema) },
    ...problemResponses.validation,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...problemResponses.notFound,
  },
});

registry.registerPath({
  method: 'delete',
  path: '/api/v1/keys/{id}',
  operationId: 'revokeKey',
  tags,
  summary: 'Revoke a key',
  description: 'Revocation is immediate and final; the key stays listed as `revoked`. Audited.',
  security: sessionOnly,
  request: { params: KeyIdParamsSchema },
  responses: {
    200: { description: 'The revoked key.', ...json(ApiKeySchema) },
    ...problemResponses.validation,
    ...authProblems.unauthenticated,
    ...authProblems.forbidden,
    ...problemResponses.notFound,
  },
});

export function keysRouter(ctx: AppContext): Router {
  const router = Router();
  const session = requireSession(ctx);

  router.get('/keys', session, validateQuery(ListKeysQuerySchema), async (_req, res) => {
    const caller = callerOf(res);
    const query = input(res, ListKeysQuerySchema);
    const now = ctx.clock.now();
    const userId = caller.role === 'admin' ? query.ownerId : caller.userId;
    const keys = await listKeys(ctx.database.db, { organisationId: caller.organisationId, userId, now, day: utcDay(now) });
    res.json({ keys });
  });

  router.post('/keys', session, validateBody(CreateApiKeySchema), async (_req, res) => {
    const caller = callerOf(res);
    const body = input(res, CreateApiKeySchema);
    if (caller.role !== 'admin') {
      if (body.ownerId && body.ownerId !== caller.userId) throw new ApiError('forbidden', 'Developers issue keys for themselves only; leave out ownerId or ask an admin.');
      if (body.dailyQuota !== undefined || body.burstPerMinute !== undefined) {
        throw new ApiError('forbidden', 'Only admins set quotas; leave out dailyQuota and burstPerMinute to get the organisation defaults.');
      }
    }
    const created = await createKey(
      ctx.database.db,
      {
        organisationId: caller.organisationId,
        ownerId: body.ownerId ?? caller.userId,
        name: body.name,
        note: body.note,
        expiresAt: body.expiresAt ? new Date(body.expiresAt) : undefined,
        dailyQuota: body.dailyQuota,
        burstPerMinute: body.burstPerMinute,
        allowedOrigins: body.allowedOrigins,
        actor: await memberActor(ctx.database.db, caller),
      },
      ctx.clock.now(),
    );
    res.status(201).setHeader('Cache-Control', 'no-store').json(created);
  });

  router.get('/keys/:id', session, validateParams(KeyIdParamsSchema), async (_req, res) => {
    const caller = callerOf(res);
    const { id } = input(res, KeyIdParamsSchema);
    const now = ctx.clock.now();
    const key = await findKey(ctx.database.db, {
      organisationId: caller.organisationId,
      keyId: id,
      userId: caller.role === 'admin' ? undefined : caller.userId,
      now,
      day: utcDay(now),
    });
    if (!key) throw new ApiError('notFound', 'No key with that id among the keys you manage; GET /api/v1/keys lists them.');
    res.json(key);
  });

  router.patch('/keys/:id', session, validateParams(KeyIdParamsSchema), validateBody(UpdateApiKeySchema), async (_req, res) => {
    const caller = callerOf(res);
    const { id } = input(res, KeyIdParamsSchema);
    const changes = input(res, UpdateApiKeySchema);
    if (caller.role !== 'admin' && (changes.dailyQuota !== undefined || changes.burstPerMinute !== undefined)) {
      throw new ApiError('forbidden', 'Only admins change quotas; ask an admin of your organisation.');
    }
    const key = await updateKey(
      ctx.database.db,
      {
        organisationId: caller.organisationId,
        keyId: id,
        ownerId: caller.role === 'admin' ? undefined : caller.userId,
        actor: await memberActor(ctx.database.db, caller),
        changes,
      },
      ctx.clock.now(),
    );
    // The database trigger announces the change to every process; this one forgets the key at once.
    ctx.keyServices.cache.forget(`key:${id}`);
    res.json(key);
  });

  router.delete('/keys/:id', session, validateParams(KeyIdParamsSchema), async (_req, res) => {
    const caller = callerOf(res);
    const { id } = input(res, KeyIdParamsSchema);
    const key = await revokeKey(
      ctx.database.db,
      { organisationId: caller.organisationId, keyId: id, ownerId: caller.role === 'admin' ? undefined : caller.userId, actor: await memberActor(ctx.database.db, caller) },
      ctx.clock.now(),
    );
    ctx.keyServices.cache.forget(`key:${id}`);
    res.json(key);
  });

  return router;
}
