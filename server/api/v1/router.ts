import type { Router } from 'express';
import type { AppContext } from '../../context.ts';
import { calculationGuard, requireCaller } from '../../auth/caller.ts';
import { calcRouter } from './calc/calc.routes.ts';
import { batchRouter } from './batch/batch.routes.ts';
import { cablesRouter } from './cables/cables.routes.ts';
import { feedlinesRouter } from './feedlines/feedlines.routes.ts';
import { sweepsRouter } from './sweeps/sweeps.routes.ts';
// Imported in the order the OpenAPI document lists them (registration happens at import).
import { sessionRouter } from './session/session.routes.ts';
import { passwordResetRouter } from './password-reset/password-reset.routes.ts';
import { keysRouter } from './keys/keys.routes.ts';
import { usageRouter } from './usage/usage.routes.ts';
import { membersRouter } from './members/members.routes.ts';
import { invitationsRouter } from './invitations/invitations.routes.ts';
import { organisationRouter } from './organisation/organisation.routes.ts';
import { auditRouter } from './audit/audit.routes.ts';
import { mailRouter } from './mail/mail.routes.ts';

/**
 * Version 1 of the API, mounted once at `/api/v1`. Each resource module registers its OpenAPI paths
 * when imported and contributes a router here.
 */
export function v1Router(ctx: AppContext): Router {
  // Every calculation route needs a key or a console session; metered ones also spend quota. The
  // calculation routes are the hot path, so they sit in this router itself rather than one level down.
  const router = calcRouter(ctx, { guard: (endpoint, { metered }) => (metered ? calculationGuard(ctx, endpoint) : [requireCaller(ctx)]) });
  router.use(batchRouter(ctx));
  router.use(cablesRouter(ctx));
  router.use(feedlinesRouter(ctx));
  router.use(sweepsRouter(ctx));
  router.use(sessionRouter(ctx));
  router.use(passwordResetRouter(ctx));
  router.use(keysRouter(ctx));
  router.use(usageRouter(ctx));
  router.use(membersRouter(ctx));
  router.use(invitationsRouter(ctx));
  router.use(organisationRouter(ctx));
  router.use(auditRouter(ctx));
  router.use(mailRouter(ctx));
  return router;
}
