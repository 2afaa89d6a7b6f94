import { Router } from 'express';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireAdmin, requireSession } from '../../../auth/caller.ts';
import { authProblems, sessionOnly } from '../../../auth/openapi.ts';
import { ApiError } from '../../../http/problem.ts';
import { input, validateParams, validateQuery } from '../../../http/validate.ts';
import { problemResponses, registry } from '../../../openapi/registry.ts';
import { z } from '../../../zod.ts';
import { findCapturedMail, listCapturedMail } from './mail.repository.ts';

const SummaryFields = {
  id: z.uuid(),
  from: z.string().openapi({ example: 'no-reply@gammaline.example' }),
  to: z.array(z.string()).openapi({ example: ['oskar.brandt@kestrel-ridge.example'] }),
  subject: z.string().openapi({ example: 'You are invited to Kestrel Ridge Radio Club on Gammaline' }),
  receivedAt: z.string().openapi({ example: '2026-03-14T09:30:01.000Z' }),
};
const MailSummarySchema = z.object(SummaryFields).openapi('CapturedMailSummary');
const MailSchema = z
  .object({ ...SummaryFields, text: z.string().openapi({ description: 'Decoded plain-text body.' }), raw: z.string().openapi({ description: 'The message as received.' }) })
  .openapi('CapturedMail');

const ListQuery = z.strictObject({
  to: z.string().max(254).optional().openapi({ description: 'Only messages to this address.', example: 'oskar.brandt@kestrel-ridge.example' }),
  limit: z.coerce.number().int().min(1).max(200).default(50).openapi({ example: 50 }),
});
const IdParams = z.object({ id: z.uuid({ message: 'message ids are UUIDs, as listed by GET /api/v1/mail' }) });

/** The routes that exist in local mode only (the captured mail). */
export const LOCAL_MODE_PATH_PREFIX = '/api/v1/mail';

const LOCAL_ONLY = ' Local mode only: in production Gammaline sends mail through SMTP_URL and this route answers 404.';
const tags = ['Local mail'];

registry.registerPath({
  method: 'get',
  path: '/api/v1/mail',
  operationId: 'listCapturedMail',
  tags,
  summary: 'Captured outgoing mail, newest first (admins, local mode)',
  description: `Every message the app sent, as caught by its own SMTP server on 127.0.0.1.${LOCAL_ONLY}`,
  security: sessionOnly,
  request: { query: ListQuery },
  responses: { 200: { description: 'Messages without bodies.', content: { 'application/json': { schema: z.object({ messages: z.array(MailSummarySchema) }).openapi('CapturedMailList') } } }, ...problemResponses.validation, ...authProblems.unauthenticated, ...authProblems.forbidden, ...problemResponses.notFound },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/mail/{id}',
  operationId: 'getCapturedMail',
  tags,
  summary: 'One captured message (admins, local mode)',
  description: `Decoded text and the raw message.${LOCAL_ONLY}`,
  security: sessionOnly,
  request: { params: IdParams },
  responses: { 200: { description: 'The message.', content: { 'application/json': { schema: MailSchema } } }, ...problemResponses.validation, ...authProblems.unauthenticated, ...authProblems.forbidden, ...problemResponses.notFound },
});

/**
 * Captured mail is not scoped to an organisation: in local mode there is one operator, and the
 * capture server cannot know which organisation a message concerns. Never mounted in production.
 */
export function mailRouter(ctx: AppContext): Router {
  const router = Router();
  if (ctx.config.mode !== 'local') return router;
  const session = requireSession(ctx);
  const db = ctx.database.db;

  // Captured mail is shown only to admins of the organisation it was sent for (invitation and reset
  // links carry tokens); another organisation's message is as unknown as one that does not exist.
  router.get('/mail', session, requireAdmin, validateQuery(ListQuery), async (_req, res) => {
    const { to, limit } = input(res, ListQuery);
    const rows = await listCapturedMail(db, { organisationId: callerOf(res).organisationId, to, limit });
    res.json({ messages: rows.map((row) => ({ ...row, receivedAt: row.receivedAt.toISOString() })) });
  });

  router.get('/mail/:id', session, requireAdmin, validateParams(IdParams), async (_req, res) => {
    const { id } = input(res, IdParams);
    const row = await findCapturedMail(db, { organisationId: callerOf(res).organisationId, id });
    if (!row) throw new ApiError('notFound', 'No captured message with that id; GET /api/v1/mail lists them.');
    res.json({ id: row.id, from: row.envelopeFrom, to: row.envelopeTo, subject: row.subject, receivedAt: row.receivedAt.toISOString(), text: row.textBody, raw: row.raw });
  });

  return router;
}
