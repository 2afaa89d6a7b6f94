import { Router, type RequestHandler, type Response } from 'express';
import { keyOrSession, meteredProblems, rateLimitHeaders } from '../../../auth/openapi.ts';
import type { AppContext } from '../../../context.ts';
import { validateBody } from '../../../http/validate.ts';
import { calculationProblems, registry } from '../../../openapi/registry.ts';
import { accountCableIdsIn, calculationEnvFor } from '../cables/cables.env.ts';
import { catalogOnly, type CalculationEnv } from './line-models.ts';
import { assertFinite, CALCULATIONS, type CalculationName } from './operations.ts';

/** Authentication and metering for one endpoint, supplied by whoever mounts the router. */
export type EndpointGuard = (endpoint: string, options: { metered: boolean }) => RequestHandler[];

/** Each calculation's path is `/api/v1/<name>`, the name a batch item gives as its `op`. */
const CALCULATION_ROUTES: { name: CalculationName; operationId: string; summary: string; description: string }[] = [
  {
    name: 'mismatch',
    operationId: 'convertMismatch',
    summary: 'Mismatch conversions',
    description:
      'Converts one mismatch figure (SWR, |Γ|, return loss, mismatch loss, reflected power ratio, forward/reflected power or detector voltage, or standing-wave max/min voltage) into all the others. Reflected above forward, SWR below 1 or negative powers are a 422 problem naming the field; two inputs at once, or half of a pair, are a 400.',
  },
  {
    name: 'reflection',
    operationId: 'computeReflection',
    summary: 'Reflection coefficient of a complex load, and its inverse',
    description: 'Γ = (ZL − Z0)/(ZL + Z0) with the mismatch figures, the load admittance, and the power-wave reflection coefficient for a complex Z0. Give `reflection` instead of `loadOhm` for the inverse.',
  },
  {
    name: 'line',
    operationId: 'transformThroughLine',
    summary: 'Transform a load through a lossy line',
    description:
      'Input impedance, matched and total loss, SWR at both ends; with `powerW` also the power delivered and dissipated and the RMS voltage/current maxima on the line, with cautions when a voltage exceeds the cable\'s rating. ' +
      '`line` is one line description, or sections from the transmitter end (cables of different kinds, connectors) as in a saved feed line: the answer then adds each section\'s own figures in `sections`.',
  },
  {
    name: 'refer',
    operationId: 'referReading',
    summary: 'Refer readings between the two ends of a line',
    description:
      'Moves an SWR or forward/reflected power reading from the transmitter end to the antenna end (or back) through the line\'s matched loss (of all its sections, when `line` is given as sections). A lossy line makes a bad load look good at the transmitter: readings that imply a load reflection above 1 are a 422 problem, because the readings and the stated loss cannot both be right.',
  },
  {
    name: 'match',
    operationId: 'matchLoad',
    summary: 'L-network matching',
    description: 'Every L-network (series/shunt inductor or capacitor pairs) that transforms the load to the conjugate of the source impedance, with component values at the frequency.',
  },
  {
    name: 'fault-distance',
    operationId: 'computeFaultDistance',
    summary: 'Distance to fault from a wideband sweep',
    description:
      'Frequency-domain reflectometry in band-pass mode: the reflection over the swept band, windowed (`hann` by default) and zero-padded, inverse-Fourier-transformed into reflection against distance (time × c × VF / 2), with the line loss out and back removed when `compensateLoss`. ' +
      'Answers the resolution c·VF/(2·span), the unambiguous range c·VF/(2·step), the response from 0 to the range and its peaks, strongest first. ' +
      `Frequencies must be evenly spaced (each within 1 % of a step); too few points, uneven spacing, or a range the span cannot resolve are a 422 saying why. For a stored sweep use POST /api/v1/sweeps/{id}/fault-distance.`,
  },
];

/** The answer to a request schema's own example, so /docs shows a request and the answer it really gets. */
function answerToExample(name: CalculationName): unknown {
  const calc = CALCULATIONS[name];
  const example = (calc.request.meta() as { example?: unknown } | undefined)?.example;
  return calc.run(calc.request.parse(example) as never, catalogOnly);
}

for (const route of CALCULATION_ROUTES) {
  const calc = CALCULATIONS[route.name];
  registry.registerPath({
    method: 'post',
    path: `/api/v1/${route.name}`,
    operationId: route.operationId,
    tags: ['Calculations'],
    summary: route.summary,
    description: route.description,
    security: keyOrSession,
    request: { body: { required: true, content: { 'application/json': { schema: calc.request } } } },
    responses: {
      200: {
        description: 'The result, in full double precision; unbounded values are `null`.',
        headers: rateLimitHeaders,
        content: { 'application/json': { schema: calc.result, example: answerToExample(route.name) } },
      },
      ...calculationProblems,
      ...meteredProblems,
    },
  });
}

/**
 * The cables a request may use: a fixed set when the router was built with one (tests), otherwise the
 * catalog plus the caller's account cables that the body names.
 */
export function calculationEnv(ctx: AppContext, fixed?: CalculationEnv): RequestHandler {
  return (_req, res, next) => {
    const caller = res.locals.caller;
    const ids = fixed || !caller ? [] : accountCableIdsIn(res.locals.body);
    // Most bodies name catalog cables or none: decided without a promise or a query.
    if (ids.length === 0) {
      res.locals.calculationEnv = fixed ?? catalogOnly;
      next();
      return;
    }
    calculationEnvFor(ctx.database.db, caller!.organisationId, ids).then((env) => {
      res.locals.calculationEnv = env;
      next();
    }, next);
  };
}

/** The env a route set up with `calculationEnv`. */
export function envOf(res: Response): CalculationEnv {
  return (res.locals.calculationEnv as CalculationEnv | undefined) ?? catalogOnly;
}

/** The calculation endpoints; the cable catalog lives in the cables module. */
export function calcRouter(ctx: AppContext, options: { guard?: EndpointGuard; env?: CalculationEnv } = {}): Router {
  const guard = options.guard ?? (() => []);
  const env = calculationEnv(ctx, options.env);
  const router = Router();

  for (const route of CALCULATION_ROUTES) {
    const calc = CALCULATIONS[route.name];
    router.post(`/${route.name}`, ...guard(route.name, { metered: true }), validateBody(calc.request), env, (_req, res) => {
      const body = JSON.stringify(assertFinite(calc.run(res.locals.body as never, envOf(res))));
      // Straight to the socket: res.json's content negotiation and conversions are not needed here.
      res.setHeader('Content-Type', 'application/json; charset=utf-8');
      res.end(body);
    });
  }

  return router;
}
