import type { Router } from 'express';
import type { AppContext } from '../../context.ts';
import { requireCaller } from '../../auth/caller.ts';
import { calculationGuard } from '../../quota/meter.ts';
import { browserPreflight } from '../../http/cors.ts';
import { calculationsRouter } from './calculations/calculations.routes.ts';
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
import { statusRouter } from './status/status.routes.ts';

/**
 * Version 1 of the API, mounted once at `/api/v1`. Each resource module registers its OpenAPI paths
 * when imported and contributes a router here.
 */
export function v1Router(ctx: AppContext): Router {
  // Every calculation route needs a key or a console session; metered ones also spend quota. The
  // calculation routes are the hot path, so they sit in this router itself rather than one level down.
  const router = calculationsRouter(ctx, { guard: (endpoint, { metered }) => (metered ? calculationGuard(ctx, endpoint) : [requireCaller(ctx)]) });
  // Browsers ask before a page's cross-origin call (without its key); the calls themselves are checked with their key (requireCaller).
  router.options('/{*path}', browserPreflight(ctx));
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
  router.use(statusRouter(ctx));
  return router;
}
