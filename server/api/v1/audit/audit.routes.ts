import { Router } from 'express';
import type { AppContext } from '../../../context.ts';
import { callerOf, requireAdmin, requireSession } from '../../../auth/caller.ts';
import { authProblems, sessionOnly } from '../../../auth/openapi.ts';
import { input, validateQuery } from '../../../http/validate.ts';
import { problemResponses, registry } from '../../../openapi/registry.ts';
import { z } from '../../../zod.ts';
import { listAudit, type AuditTargetType } from './audit.repository.ts';

const AuditEventSchema = z
  .object({
    id: z.uuid(),
    actorUserId: z.uuid().nullable().openapi({ description: 'null: an operator at the CLI.' }),
    actorLabel: z.string().openapi({ example: 'admin@kestrel-ridge.example' }),
    action: z.string().openapi({ description: '`key.created`, `key.revoked`, `key.quota_changed`, `member.role_changed`, `member.disabled`, `member.enabled`, `member.joined`, `member.left` (moved to another organisation by accepting its invitation), `invitation.sent`, `invitation.withdrawn`, `organisation.defaults_changed`, `cable.added`, `cable.changed`, `cable.removed` (account cables).', example: 'key.quota_changed' }),
    targetType: z.enum(['key', 'member', 'invitation', 'organisation', 'cable']).openapi({ example: 'key' }),
    targetId: z.uuid(),
    details: z.record(z.string(), z.unknown()).openapi({ example: { before: { dailyQuota: 10000, burstPerMinute: 120 }, after: { dailyQuota: 20000, burstPerMinute: 120 } } }),
    createdAt: z.string().openapi({ example: '2026-03-14T09:31:00.000Z' }),
  })
  .openapi('AuditEvent');

const AuditQuery = z.strictObject({
  limit: z.coerce.number().int().min(1).max(500).default(100).openapi({ example: 100 }),
  before: z.iso.datetime({ offset: true }).optional().openapi({ description: 'Only events before this instant (for paging: the createdAt of the last event seen).' }),
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/audit',
  operationId: 'listAuditEvents',
  tags: ['Audit'],
  summary: 'Who changed keys, quotas and roles, newest first (admins)',
  security: sessionOnly,
  request: { query: AuditQuery },
  responses: { 200: { description: 'Audit events.', content: { 'application/json': { schema: z.object({ events: z.array(AuditEventSchema) }).openapi('AuditEventList') } } }, ...problemResponses.validation, ...authProblems.unauthenticated, ...authProblems.forbidden },
});

export function auditRouter(ctx: AppContext): Router {
  const router = Router();
  router.get('/audit', requireSession(ctx), requireAdmin, validateQuery(AuditQuery), async (_req, res) => {
    const page = input(res, AuditQuery);
    const rows = await listAudit(ctx.database.db, { organisationId: callerOf(res).organisationId, limit: page.limit, before: page.before ? new Date(page.before) : undefined });
    res.json({
      events: rows.map((row) => ({
        id: row.id,
        actorUserId: row.actorUserId,
        actorLabel: row.actorLabel,
        action: row.action,
        targetType: row.targetType as AuditTargetType,
        targetId: row.targetId,
        details: row.details as Record<string, unknown>,
        createdAt: row.createdAt.toISOString(),
      })),
    });
  });
  return router;
}
