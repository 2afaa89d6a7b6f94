import type { z } from 'zod';
import { cascadeLines, transformLine } from '../rf/line.ts';
import { COMPONENT_STRESS_CAUTION, lNetworkSolutions, withStresses } from '../rf/match.ts';
import { mismatch, type MismatchInput } from '../rf/mismatch.ts';
import { referReading } from '../rf/refer.ts';
import { reflectionReport, reflectionReportFromGamma } from '../rf/reflection.ts';
import {
  LineRequestSchema,
  LineResultSchema,
  MatchRequestSchema,
  MatchResultSchema,
  MismatchRequestSchema,
  MismatchResultSchema,
  ReferRequestSchema,
  ReferResultSchema,
  ReflectionRequestSchema,
  ReflectionResultSchema,
} from '../schemas/calculations.ts';
import { toComplex } from '../schemas/common.ts';
import { FaultDistanceRequestSchema, FaultDistanceResultSchema } from '../schemas/fault.ts';
import { reflectionSamples } from '../sweep/fault-distance.ts';
import type { CableLookup } from './cable-lookup.ts';
import { faultDistanceOf } from './fault-distance.ts';
import { lineModelsOf } from './line-models.ts';
import { referThroughModels, type ReferReading } from './referral.ts';

/**
 * One calculation: everything the API needs to offer it. The server turns each entry into
 * POST /api/v1/<name> with its OpenAPI entry, a batch `op`, and quota and usage recorded under `name`;
 * no other list of calculations exists, so an entry here is the whole of adding one.
 */
export interface Calculation<Name extends string = string, Req extends z.ZodType = z.ZodType, Res extends z.ZodType = z.ZodType> {
  /** The path segment (`/api/v1/<name>`), the batch item's `op`, and the endpoint name usage is recorded under. */
  name: Name;
  /** Unique camelCase verb + noun of the OpenAPI operation. */
  operationId: string;
  summary: string;
  description: string;
  /** The request body; its `.meta({ example })` is the example /docs shows, answered by `run`. */
  request: Req;
  result: Res;
  /** The computation itself: no I/O; impossible inputs throw RfInputError naming the field. */
  run(input: z.output<Req>, cables: CableLookup): z.input<Res>;
}

function calculation<const Name extends string, Req extends z.ZodType, Res extends z.ZodType>(c: Calculation<Name, Req, Res>): Calculation<Name, Req, Res> {
  return c;
}

function definedOnly<T extends object>(value: T): T {
  const out: Record<string, unknown> = {};
  for (const k in value) if (value[k] !== undefined) out[k] = value[k];
  return out as T;
}

/** Every calculation, in the order the OpenAPI document and the batch documentation list them. */
export const CALCULATIONS = [
  calculation({
    name: 'mismatch',
    operationId: 'convertMismatch',
    summary: 'Mismatch conversions',
    description:
      'Converts one mismatch figure (SWR, |Γ|, return loss, mismatch loss, reflected power ratio, forward/reflected power or detector voltage, or standing-wave max/min voltage) into all the others. Reflected above forward, SWR below 1 or negative powers are a 422 problem naming the field; two inputs at once, or half of a pair, are a 400.',
    request: MismatchRequestSchema,
    result: MismatchResultSchema,
    run: (input) => mismatch(definedOnly(input) as MismatchInput),
  }),
  calculation({
    name: 'reflection',
    operationId: 'computeReflection',
    summary: 'Reflection coefficient of a complex load, and its inverse',
    description: 'Γ = (ZL − Z0)/(ZL + Z0) with the mismatch figures, the load admittance, and the power-wave reflection coefficient for a complex Z0. Give `reflection` instead of `loadOhm` for the inverse.',
    request: ReflectionRequestSchema,
    result: ReflectionResultSchema,
    run: (input) => {
      const reference = toComplex(input.referenceOhm);
      return input.reflection !== undefined ? reflectionReportFromGamma(input.reflection, reference) : reflectionReport(toComplex(input.loadOhm!), reference);
    },
  }),
  calculation({
    name: 'line',
    operationId: 'transformThroughLine',
    summary: 'Transform a load through a lossy line',
    description:
      'Input impedance, matched and total loss, SWR at both ends; with `powerW` also the power delivered and dissipated and the RMS voltage/current maxima on the line, with cautions when a voltage exceeds the cable\'s rating. ' +
      '`line` is one line description, or sections from the transmitter end (cables of different kinds, connectors) as in a saved feed line: the answer then adds each section\'s own figures in `sections`.',
    request: LineRequestSchema,
    result: LineResultSchema,
    run: (input, cables) => {
      const models = lineModelsOf(input.line, input.frequencyHz, cables);
      const load = toComplex(input.loadOhm);
      return !Array.isArray(input.line) ? transformLine(models[0]!, load, input.frequencyHz, input.powerW) : cascadeLines(models, load, input.frequencyHz, input.powerW, 'line');
    },
  }),
  calculation({
    name: 'refer',
    operationId: 'referReading',
    summary: 'Refer readings between the two ends of a line',
    description:
      'Moves an SWR or forward/reflected power reading from the transmitter end to the antenna end (or back) through the line\'s matched loss (of all its sections, when `line` is given as sections). A lossy line makes a bad load look good at the transmitter: readings that imply a load reflection above 1 are a 422 problem, because the readings and the stated loss cannot both be right.',
    request: ReferRequestSchema,
    result: ReferResultSchema,
    run: (input, cables) => {
      const reading = definedOnly(input.reading) as ReferReading;
      if (input.matchedLossDb !== undefined) return { ...referReading({ matchedLossDb: input.matchedLossDb, direction: input.direction, reading }), cautions: [] };
      const { sectionsMatchedLossDb, ...referred } = referThroughModels(lineModelsOf(input.line!, input.frequencyHz!, cables), input.direction, reading);
      return Array.isArray(input.line) ? { ...referred, sectionsMatchedLossDb } : referred;
    },
  }),
  calculation({
    name: 'match',
    operationId: 'matchLoad',
    summary: 'L-network matching',
    description: 'Every L-network (series/shunt inductor or capacitor pairs) that transforms the load to the conjugate of the source impedance, with component values at the frequency.',
    request: MatchRequestSchema,
    result: MatchResultSchema,
    run: (input) => {
      const solutions = lNetworkSolutions(toComplex(input.loadOhm), toComplex(input.sourceOhm), input.frequencyHz);
      if (input.powerW === undefined) return { solutions, cautions: [] };
      return { solutions: withStresses(solutions, input.powerW), cautions: solutions.length > 0 ? [COMPONENT_STRESS_CAUTION] : [] };
    },
  }),
  calculation({
    name: 'fault-distance',
    operationId: 'computeFaultDistance',
    summary: 'Distance to fault from a wideband sweep',
    description:
      'Frequency-domain reflectometry in band-pass mode: the reflection over the swept band, windowed (`hann` by default) and zero-padded, inverse-Fourier-transformed into reflection against distance (time × c × VF / 2), with the line loss out and back removed when `compensateLoss`. ' +
      'Answers the resolution c·VF/(2·span), the unambiguous range c·VF/(2·step), the response from 0 to the range and its peaks, strongest first. ' +
      `Frequencies must be evenly spaced (each within 1 % of a step); too few points, uneven spacing, or a range the span cannot resolve are a 422 saying why. For a stored sweep use POST /api/v1/sweeps/{id}/fault-distance.`,
    request: FaultDistanceRequestSchema,
    result: FaultDistanceResultSchema,
    run: (input, cables) => faultDistanceOf(reflectionSamples(input.points, input.referenceOhm), input, cables),
  }),
] as const;

export type CalculationName = (typeof CALCULATIONS)[number]['name'];

/** The names in table order: the batch `op` values. */
export const CALCULATION_NAMES: readonly CalculationName[] = CALCULATIONS.map((c) => c.name);

const BY_NAME: ReadonlyMap<string, Calculation<CalculationName>> = new Map(CALCULATIONS.map((c) => [c.name, c as Calculation<CalculationName>]));

/** The calculation of that name (a batch item's `op`), or undefined. */
export function calculationNamed(name: string): Calculation<CalculationName> | undefined {
  return BY_NAME.get(name);
}
