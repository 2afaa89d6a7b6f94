import type { z } from 'zod';
import { cascadeLines, readingPeaks, transformLine, type LineModel } from '../../../../shared/rf/line.ts';
import { COMPONENT_STRESS_CAUTION, lNetworkSolutions, withStresses } from '../../../../shared/rf/match.ts';
import { mismatch, type MismatchInput } from '../../../../shared/rf/mismatch.ts';
import { referReading } from '../../../../shared/rf/refer.ts';
import { reflectionReport, reflectionReportFromGamma } from '../../../../shared/rf/reflection.ts';
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
} from '../../../../shared/schemas/calc.ts';
import { toComplex } from '../../../../shared/schemas/common.ts';
import { FaultDistanceRequestSchema, FaultDistanceResultSchema, type FaultLine } from '../../../../shared/schemas/fault.ts';
import type { SweepPointInput } from '../../../../shared/schemas/sweeps.ts';
import { evenFrequencyStep, faultDistance, type FaultWindow, type ReflectionSample } from '../../../../shared/sweep/fault-distance.ts';
import { reflectionAgainst } from '../../../../shared/sweep/points.ts';
import { RfInputError } from '../../../../shared/rf/errors.ts';
import { ApiError } from '../../../http/problem.ts';
import { faultLineOf, lineModelsOf, sectionMatchedLossDb, type CalculationEnv } from './line-models.ts';

/** Refuses to send a number that overflowed: JSON would silently turn it into null. */
export function assertFinite<T>(value: T): T {
  if (!allFinite(value)) {
    throw new ApiError('unprocessable', 'The inputs lead to a result outside double-precision range; check their units and magnitudes.');
  }
  return value;
}

// Results are a few levels deep: plain recursion with for…in allocates nothing per object.
function allFinite(v: unknown): boolean {
  if (typeof v === 'number') return Number.isFinite(v);
  if (v === null || typeof v !== 'object') return true;
  if (Array.isArray(v)) {
    for (let i = 0; i < v.length; i++) if (!allFinite(v[i])) return false;
    return true;
  }
  const o = v as Record<string, unknown>;
  for (const k in o) if (!allFinite(o[k])) return false;
  return true;
}

function definedOnly<T extends object>(value: T): T {
  const out: Record<string, unknown> = {};
  for (const k in value) if (value[k] !== undefined) out[k] = value[k];
  return out as T;
}

type ReferReading = Parameters<typeof referReading>[0]['reading'];

/** A reading referred through line models, whose matched losses add up; each model's own loss is listed too. */
export function referThroughModels(models: readonly LineModel[], direction: 'inputToLoad' | 'loadToInput', reading: ReferReading) {
  const sectionsMatchedLossDb = models.map(sectionMatchedLossDb);
  const matchedLossDb = sectionsMatchedLossDb.reduce((a, b) => a + b, 0);
  const referred = referReading({ matchedLossDb, direction, reading });
  const { forwardPowerW, reflectedPowerW } = referred.atInput;
  // With powers the line's voltage and current maxima are known, and cautioned as on /line.
  if (forwardPowerW === undefined || reflectedPowerW === undefined) return { ...referred, cautions: [] as string[], sectionsMatchedLossDb };
  return { ...referred, ...readingPeaks(models, forwardPowerW, reflectedPowerW), sectionsMatchedLossDb };
}

/** The options of a distance-to-fault request, inline or for a stored sweep. */
export interface FaultOptions {
  line: FaultLine;
  window: FaultWindow;
  maxDistanceM?: number | undefined;
  compensateLoss?: boolean | undefined;
}

/**
 * Distance to fault of evenly spaced reflections with the line the request describes; compensation
 * defaults to on when the line has a loss. The spacing is checked before the line, so a sweep that
 * cannot be used is reported as such.
 */
export function faultDistanceOf(samples: readonly ReflectionSample[], options: FaultOptions, env: CalculationEnv) {
  evenFrequencyStep(samples);
  const centreHz = (samples[0]!.frequencyHz + samples[samples.length - 1]!.frequencyHz) / 2;
  const line = faultLineOf(options.line, centreHz, env);
  const compensateLoss = options.compensateLoss ?? (line.lossDbPer100m !== undefined && line.lossDbPer100m > 0);
  return faultDistance(samples, { velocityFactor: line.velocityFactor, lossDbPer100m: line.lossDbPer100m, window: options.window, compensateLoss, maxDistanceM: options.maxDistanceM });
}

/** JSON sweep points as reflections against the reference: `reflection` as given, `loadOhm` converted, an open circuit Γ = 1. */
function samplesFromJson(points: readonly SweepPointInput[], referenceOhm: number): ReflectionSample[] {
  return points.map((p, k) => {
    if (p.reflection !== undefined) return { frequencyHz: p.frequencyHz, reflection: p.reflection };
    if (p.loadOhm === null || p.loadOhm === undefined) return { frequencyHz: p.frequencyHz, reflection: { re: 1, im: 0 } };
    const reflection = reflectionAgainst(toComplex(p.loadOhm), referenceOhm);
    if (!reflection) throw new RfInputError(`points.${k}.loadOhm`, `This load has no reflection coefficient against ${referenceOhm} Ω; a passive load has a resistance of 0 Ω or more.`);
    return { frequencyHz: p.frequencyHz, reflection };
  });
}

interface Calculation<Req extends z.ZodType, Res extends z.ZodType> {
  request: Req;
  result: Res;
  run(input: z.output<Req>, env: CalculationEnv): z.input<Res>;
}

function calculation<Req extends z.ZodType, Res extends z.ZodType>(c: Calculation<Req, Res>): Calculation<Req, Res> {
  return c;
}

/** Every calculation by name: the single endpoints and the batch endpoint run the same code. */
export const CALCULATIONS = {
  mismatch: calculation({
    request: MismatchRequestSchema,
    result: MismatchResultSchema,
    run: (input) => mismatch(definedOnly(input) as MismatchInput),
  }),
  reflection: calculation({
    request: ReflectionRequestSchema,
    result: ReflectionResultSchema,
    run: (input) => {
      const reference = toComplex(input.referenceOhm);
      return input.reflection !== undefined ? reflectionReportFromGamma(input.reflection, reference) : reflectionReport(toComplex(input.loadOhm!), reference);
    },
  }),
  line: calculation({
    request: LineRequestSchema,
    result: LineResultSchema,
    run: (input, env) => {
      const models = lineModelsOf(input.line, input.frequencyHz, env);
      const load = toComplex(input.loadOhm);
      return !Array.isArray(input.line) ? transformLine(models[0]!, load, input.frequencyHz, input.powerW) : cascadeLines(models, load, input.frequencyHz, input.powerW, 'line');
    },
  }),
  refer: calculation({
    request: ReferRequestSchema,
    result: ReferResultSchema,
    run: (input, env) => {
      const reading = definedOnly(input.reading) as ReferReading;
      if (input.matchedLossDb !== undefined) return { ...referReading({ matchedLossDb: input.matchedLossDb, direction: input.direction, reading }), cautions: [] };
      const { sectionsMatchedLossDb, ...referred } = referThroughModels(lineModelsOf(input.line!, input.frequencyHz!, env), input.direction, reading);
      return Array.isArray(input.line) ? { ...referred, sectionsMatchedLossDb } : referred;
    },
  }),
  match: calculation({
    request: MatchRequestSchema,
    result: MatchResultSchema,
    run: (input) => {
      const solutions = lNetworkSolutions(toComplex(input.loadOhm), toComplex(input.sourceOhm), input.frequencyHz);
      if (input.powerW === undefined) return { solutions, cautions: [] };
      return { solutions: withStresses(solutions, input.powerW), cautions: solutions.length > 0 ? [COMPONENT_STRESS_CAUTION] : [] };
    },
  }),
  'fault-distance': calculation({
    request: FaultDistanceRequestSchema,
    result: FaultDistanceResultSchema,
    run: (input, env) => faultDistanceOf(samplesFromJson(input.points, input.referenceOhm), input, env),
  }),
} as const;

export type CalculationName = keyof typeof CALCULATIONS;
