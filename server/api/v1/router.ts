import { Router } from 'express';
import type { AppContext } from '../../context.ts';

/**
 * Version 1 of the API, mounted once at `/api/v1`. Each resource module registers its OpenAPI paths
 * when imported and contributes a router here.
 */
export function v1Router(_ctx: AppContext): Router {
  const router = Router();
  return router;
}
