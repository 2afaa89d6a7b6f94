import { z } from 'zod';
import { SPEED_OF_LIGHT_M_PER_S } from '../rf/constants.ts';
import { FAULT_WINDOWS, MIN_FAULT_POINTS } from '../sweep/fault-distance.ts';
import { shapeIssue } from './issues.ts';
import { MAX_JSON_SWEEP_POINTS, SweepPointInputSchema } from './sweeps.ts';

export const FaultLineSchema = z
  .strictObject({
    cableId: z.string().min(1).max(100).optional().meta({ description: 'A cable from `GET /api/v1/cables` or your account: its velocity factor, and its loss at the centre of the sweep.', example: 'rg-213' }),
    velocityFactor: z.number().gt(0).max(1).optional().meta({ description: 'Velocity factor, 0 < VF ≤ 1, instead of `cableId`.' }),
    lossDbPer100m: z.number().min(0).optional().meta({ description: 'Matched loss at the centre of the sweep, dB per 100 m (with `velocityFactor`).' }),
    lossDbPer100ft: z.number().min(0).optional().meta({ description: 'Matched loss at the centre of the sweep, dB per 100 ft (with `velocityFactor`).' }),
  })
  .superRefine((v, ctx) => {
    if (v.cableId !== undefined && v.velocityFactor !== undefined) shapeIssue(ctx, ['velocityFactor'], 'give cableId or velocityFactor, not both');
    if (v.cableId === undefined && v.velocityFactor === undefined) shapeIssue(ctx, [], 'describe the line by cableId, or by velocityFactor with an optional lossDbPer100m (or lossDbPer100ft)');
    if (v.cableId !== undefined) {
      for (const k of ['lossDbPer100m', 'lossDbPer100ft'] as const) {
        if (v[k] !== undefined) shapeIssue(ctx, [k], `a catalog or account cable brings its own loss; drop ${k}, or describe the line by velocityFactor instead of cableId`);
      }
    } else if (v.lossDbPer100m !== undefined && v.lossDbPer100ft !== undefined) {
      shapeIssue(ctx, ['lossDbPer100ft'], 'give the loss as lossDbPer100m or lossDbPer100ft, not both');
    }
  })
  .meta({
    id: 'FaultLine',
    description: 'The line under test: `{ cableId }` (its velocity factor and loss), or `{ velocityFactor }` with an optional `lossDbPer100m` or `lossDbPer100ft`.',
    example: { velocityFactor: 0.66, lossDbPer100m: 4.5 },
  });

export type FaultLine = z.infer<typeof FaultLineSchema>;

/** The options of a distance-to-fault request, the same for inline points and a stored sweep. */
export const faultOptionFields = {
  line: FaultLineSchema,
  window: z.enum(FAULT_WINDOWS).default('hann').meta({ description: 'Window applied across the band before the transform: `rectangular` (sharpest peaks, sidelobes 13 dB down: faults more than 10 dB weaker than the strongest are not listed), `hann` (default; 31 dB, listing down to 28.5 dB) or `blackman` (widest peaks; 58 dB, down to 55 dB).' }),
  maxDistanceM: z.number().positive().optional().meta({ description: 'Farthest distance wanted, m; default the unambiguous range c·VF/(2·step). Farther than that, or shorter than the resolution, is a 422.', example: 40 }),
  compensateLoss: z.boolean().optional().meta({ description: 'Raise each distance\'s figure by the line\'s loss out and back (at the centre of the sweep). Default: true when the line has a loss.' }),
};

function checkCompensation(v: { line: FaultLine; compensateLoss?: boolean | undefined }, ctx: z.RefinementCtx): void {
  const line = v.line as FaultLine | undefined;
  if (v.compensateLoss === true && line && line.cableId === undefined && line.lossDbPer100m === undefined && line.lossDbPer100ft === undefined) {
    shapeIssue(ctx, ['compensateLoss'], 'compensating the loss needs the line\'s loss: give line.lossDbPer100m (or lossDbPer100ft), or a cableId');
  }
}

// An invented scenario for the documentation, kept short (a real sweep has hundreds of points):
// 16 points from 2 to 62 MHz of a line (VF 0.66, 4.5 dB/100 m) with a wet connector (|Γ| 0.15) at
// 8 m and an antenna (|Γ| 0.3) at 19 m.
function examplePoints(): { frequencyHz: number; reflection: { re: number; im: number } }[] {
  const points = [];
  for (let k = 0; k < 16; k++) {
    const f = 2e6 + k * 4e6;
    let re = 0;
    let im = 0;
    for (const [rho, d] of [[0.15, 8], [0.3, 19]] as const) {
      const a = rho * 10 ** ((-2 * d * 0.045) / 20);
      const phase = (-4 * Math.PI * f * d) / (SPEED_OF_LIGHT_M_PER_S * 0.66);
      re += a * Math.cos(phase);
      im += a * Math.sin(phase);
    }
    points.push({ frequencyHz: f, reflection: { re: Number(re.toFixed(5)), im: Number(im.toFixed(5)) } });
  }
  return points;
}

export const FaultDistanceRequestSchema = z
  .strictObject({
    points: z.array(SweepPointInputSchema).min(1).max(MAX_JSON_SWEEP_POINTS).meta({ description: `The sweep as POST /api/v1/sweeps takes JSON points: evenly spaced frequencies, at least ${MIN_FAULT_POINTS} (at most ${MAX_JSON_SWEEP_POINTS}).` }),
    referenceOhm: z.number().positive().max(1e6).default(50).meta({ description: 'Real reference resistance the points\' `reflection` is taken against, and `loadOhm` is read against. Default 50.', example: 50 }),
    ...faultOptionFields,
  })
  .superRefine(checkCompensation)
  .meta({
    id: 'FaultDistanceRequest',
    description: 'A wideband sweep of a feed line with the line\'s velocity factor (and loss).',
    example: { points: examplePoints(), line: { velocityFactor: 0.66, lossDbPer100m: 4.5 }, window: 'hann', maxDistanceM: 24 },
  });

export const SweepFaultDistanceRequestSchema = z
  .strictObject(faultOptionFields)
  .superRefine(checkCompensation)
  .meta({ id: 'SweepFaultDistanceRequest', description: 'The line under test and the options; the stored sweep\'s measured points are used (before any move through a line).', example: { line: { cableId: 'rg-213' }, window: 'hann' } });

export const FaultPointSchema = z
  .object({
    distanceM: z.number().meta({ description: 'Distance from the measured end, m.' }),
    reflectionMagnitude: z.number().meta({ description: '|Γ| of what reflects there (with the line loss out and back removed when compensated; may then exceed 1 on noise far down a lossy line).' }),
    returnLossDb: z.number().nullable().meta({ description: '−20·log10 |Γ|; `null` where nothing reflects (|Γ| = 0), where it is unbounded.' }),
  })
  .meta({ id: 'FaultPoint' });

export const FaultDistanceResultSchema = z
  .object({
    resolutionM: z.number().meta({ description: 'c·VF/(2·span): reflections closer together than this merge into one peak.' }),
    maxDistanceM: z.number().meta({ description: 'c·VF/(2·step), the unambiguous range: a reflection farther away folds back to its distance minus this.' }),
    rangeM: z.number().meta({ description: 'How far `points` reach: the asked `maxDistanceM`, else the unambiguous range.' }),
    pointSpacingM: z.number().meta({ description: 'Distance between neighbouring `points` (a fraction of the resolution; at most 4,096 points are sent).' }),
    window: z.enum(FAULT_WINDOWS),
    velocityFactor: z.number(),
    compensatedLossDbPer100m: z.number().nullable().meta({ description: 'The one-way loss removed out and back, dB/100 m; `null` when none was.' }),
    peakFloorReturnLossDb: z.number().nullable().meta({ description: 'Peaks whose return loss is above this are not listed: the strongest peak\'s return loss plus the window\'s sidelobe level less 3 dB (rectangular 10.3, hann 28.5, blackman 55.1 dB), so no sidelobe is taken for a fault; `null` when nothing reflects.' }),
    points: z.array(FaultPointSchema).meta({ description: 'The response from 0 to `rangeM`, evenly spaced.' }),
    peaks: z.array(FaultPointSchema).meta({ description: 'Local maxima above the floor, strongest first (at most 20), each placed on the continuous response.' }),
  })
  .meta({ id: 'FaultDistanceResult' });
