import { Router, type RequestHandler } from 'express';
import { catalogOnly, type CableLookup } from '../../../../shared/calculations/cable-lookup.ts';
import { assertFinite } from '../../../../shared/calculations/finite.ts';
import { CALCULATIONS, type Calculation } from '../../../../shared/calculations/table.ts';
import { keyOrSession } from '../../../auth/openapi.ts';
import { meteredProblems, rateLimitHeaders } from '../../../quota/openapi.ts';
import type { AppContext } from '../../../context.ts';
import { input, validateBody } from '../../../http/validate.ts';
import { calculationProblems, registry } from '../../../openapi/registry.ts';
import { accountCableIdsIn, cableLookupFor } from '../cables/cable-lookup.ts';

/** Authentication and metering for one endpoint, supplied by whoever mounts the router. */
export type EndpointGuard = (endpoint: string, options: { metered: boolean }) => RequestHandler[];

declare global {
  namespace Express {
    interface Locals {
      /** Where the request's calculation looks up cables, set by `lookUpCables`. */
      cableLookup?: CableLookup;
    }
  }
}

/** The answer to a request schema's own example, so /docs shows a request and the answer it really gets. */
function answerToExample(calc: Calculation): unknown {
  const example = (calc.request.meta() as { example?: unknown } | undefined)?.example;
  return calc.run(calc.request.parse(example), catalogOnly);
}

for (const calc of CALCULATIONS as readonly Calculation[]) {
  registry.registerPath({
    method: 'post',
    path: `/api/v1/${calc.name}`,
    operationId: calc.operationId,
    tags: ['Calculations'],
    summary: calc.summary,
    description: calc.description,
    security: keyOrSession,
    request: { body: { required: true, content: { 'application/json': { schema: calc.request } } } },
    responses: {
      200: {
        description: 'The result, in full double precision; unbounded values are `null`.',
        headers: rateLimitHeaders,
        content: { 'application/json': { schema: calc.result, example: answerToExample(calc) } },
      },
      ...calculationProblems,
      ...meteredProblems,
    },
  });
}

/**
 * The cables a calculation may use: the catalog plus the caller's account cables that the body names.
 * Most bodies name catalog cables or none: decided without a promise or a query.
 */
function lookUpCables(ctx: AppContext, calc: Calculation): RequestHandler {
  return (_req, res, next) => {
    const caller = res.locals.caller;
    const ids = caller ? accountCableIdsIn(input(res, calc.request)) : [];
    if (ids.length === 0) {
      res.locals.cableLookup = catalogOnly;
      next();
      return;
    }
    cableLookupFor(ctx.database.db, caller!.organisationId, ids).then((cables) => {
      res.locals.cableLookup = cables;
      next();
    }, next);
  };
}

/** POST /api/v1/<name> for every entry of the calculations table; the cable catalog lives in the cables module. */
export function calculationsRouter(ctx: AppContext, options: { guard?: EndpointGuard } = {}): Router {
  const guard = options.guard ?? (() => []);
  const router = Router();

  for (const calc of CALCULATIONS as readonly Calculation[]) {
    router.post(`/${calc.name}`, ...guard(calc.name, { metered: true }), validateBody(calc.request), lookUpCables(ctx, calc), (_req, res) => {
      const body = JSON.stringify(assertFinite(calc.run(input(res, calc.request), res.locals.cableLookup ?? catalogOnly)));
      // Straight to the socket: res.json's content negotiation and conversions are not needed here.
      res.setHeader('Content-Type', 'application/json; charset=utf-8');
      res.end(body);
    });
  }

  return router;
}
