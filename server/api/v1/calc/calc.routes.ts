import { Router, type RequestHandler } from 'express';
import { z } from '../../../zod.ts';
import { CABLE_CATALOG, cableLossDbPer100m } from '../../../../shared/rf/cables.ts';
import { M_PER_FT } from '../../../../shared/rf/constants.ts';
import {
  CableAttenuationQuerySchema,
  CableAttenuationSchema,
  CableIdParamsSchema,
  CableSchema,
} from '../../../../shared/schemas/calc.ts';
import type { AppContext } from '../../../context.ts';
import { ApiError } from '../../../http/problem.ts';
import { validateBody, validateParams, validateQuery } from '../../../http/validate.ts';
import { calculationProblems, problemResponses, registry } from '../../../openapi/registry.ts';
import { assertFinite, CALCULATIONS, catalogOnly, type CalculationEnv, type CalculationName } from './operations.ts';

/** Authentication and metering for one endpoint, supplied by whoever mounts the router. */
export type EndpointGuard = (endpoint: string, options: { metered: boolean }) => RequestHandler[];

const CALCULATION_ROUTES: { name: CalculationName; path: string; summary: string; description: string }[] = [
  {
    name: 'mismatch',
    path: '/mismatch',
    summary: 'Mismatch conversions',
    description:
      'Converts one mismatch figure (SWR, |Γ|, return loss, mismatch loss, reflected power ratio, forward/reflected power or detector voltage, or standing-wave max/min voltage) into all the others. Reflected above forward, SWR below 1, negative powers or two inputs at once are a 422 problem naming the field.',
  },
  {
    name: 'reflection',
    path: '/reflection',
    summary: 'Reflection coefficient of a complex load, and its inverse',
    description: 'Γ = (ZL − Z0)/(ZL + Z0) with the mismatch figures, the load admittance, and the power-wave reflection coefficient for a complex Z0. Give `reflection` instead of `loadOhm` for the inverse.',
  },
  {
    name: 'line',
    path: '/line',
    summary: 'Transform a load through a lossy line',
    description:
      'Input impedance, matched and total loss, SWR at both ends; with `powerW` also the power delivered and dissipated and the RMS voltage/current maxima on the line, with cautions when a voltage exceeds the cable\'s rating.',
  },
  {
    name: 'refer',
    path: '/line/refer',
    summary: 'Refer readings between the two ends of a line',
    description:
      'Moves an SWR or forward/reflected power reading from the transmitter end to the antenna end (or back) through the line\'s matched loss. A lossy line makes a bad load look good at the transmitter: readings that imply a load reflection above 1 are a 422 problem, because the readings and the stated loss cannot both be right.',
  },
  {
    name: 'match',
    path: '/match',
    summary: 'L-network matching',
    description: 'Every L-network (series/shunt inductor or capacitor pairs) that transforms the load to the conjugate of the source impedance, with component values at the frequency.',
  },
];

for (const route of CALCULATION_ROUTES) {
  const calc = CALCULATIONS[route.name];
  registry.registerPath({
    method: 'post',
    path: `/api/v1${route.path}`,
    tags: ['Calculations'],
    summary: route.summary,
    description: route.description,
    request: { body: { required: true, content: { 'application/json': { schema: calc.request } } } },
    responses: {
      200: { description: 'The result, in full double precision; unbounded values are `null`.', content: { 'application/json': { schema: calc.result } } },
      ...calculationProblems,
    },
  });
}

registry.registerPath({
  method: 'get',
  path: '/api/v1/cables',
  tags: ['Cables'],
  summary: 'The cable catalog',
  description: 'Generic cable types by trade designation, with impedance, velocity factor, attenuation model, voltage rating where known, and the source of each entry.',
  responses: { 200: { description: 'Every cable.', content: { 'application/json': { schema: z.object({ cables: z.array(CableSchema) }) } } } },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/cables/{id}',
  tags: ['Cables'],
  summary: 'One cable',
  request: { params: CableIdParamsSchema },
  responses: { 200: { description: 'The cable.', content: { 'application/json': { schema: CableSchema } } }, ...problemResponses.notFound },
});

registry.registerPath({
  method: 'get',
  path: '/api/v1/cables/{id}/attenuation',
  tags: ['Cables'],
  summary: 'Matched loss of a cable at a frequency',
  request: { params: CableIdParamsSchema, query: CableAttenuationQuerySchema },
  responses: {
    200: { description: 'Loss per 100 m / 100 ft, and for the given length.', content: { 'application/json': { schema: CableAttenuationSchema } } },
    ...problemResponses.notFound,
    ...calculationProblems,
  },
});

/** The calculation endpoints and the cable catalog. */
export function calcRouter(_ctx: AppContext, options: { guard?: EndpointGuard; env?: CalculationEnv } = {}): Router {
  const guard = options.guard ?? (() => []);
  const env = options.env ?? catalogOnly;
  const router = Router();

  for (const route of CALCULATION_ROUTES) {
    const calc = CALCULATIONS[route.name];
    router.post(route.path, ...guard(route.name, { metered: true }), validateBody(calc.request), (_req, res) => {
      res.json(assertFinite(calc.run(res.locals.body as never, env)));
    });
  }

  router.get('/cables', ...guard('cables', { metered: false }), (_req, res) => {
    res.json({ cables: CABLE_CATALOG });
  });

  const findOr404: RequestHandler = (_req, res, next) => {
    const { id } = res.locals.params as z.infer<typeof CableIdParamsSchema>;
    const cable = env.findCable(id);
    if (!cable) throw new ApiError('notFound', `No cable '${id}'; GET /api/v1/cables lists the available ids.`);
    res.locals.cable = cable;
    next();
  };

  router.get('/cables/:id', ...guard('cables', { metered: false }), validateParams(CableIdParamsSchema), findOr404, (_req, res) => {
    res.json(res.locals.cable);
  });

  router.get(
    '/cables/:id/attenuation',
    ...guard('cableAttenuation', { metered: true }),
    validateParams(CableIdParamsSchema),
    findOr404,
    validateQuery(CableAttenuationQuerySchema),
    (_req, res) => {
      const { frequencyHz, lengthM, lengthFt } = res.locals.query as z.infer<typeof CableAttenuationQuerySchema>;
      const lossDbPer100m = cableLossDbPer100m(res.locals.cable, frequencyHz);
      const length = lengthM ?? (lengthFt === undefined ? undefined : lengthFt * M_PER_FT);
      const body: z.input<typeof CableAttenuationSchema> = {
        cableId: res.locals.cable.id,
        frequencyHz,
        lossDbPer100m,
        lossDbPer100ft: lossDbPer100m * M_PER_FT,
        ...(length === undefined ? {} : { lengthM: length, lossDb: (lossDbPer100m * length) / 100 }),
      };
      res.json(assertFinite(body));
    },
  );

  return router;
}
