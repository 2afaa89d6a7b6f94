import type { z } from 'zod';
import { findCable, type CableType } from '../../../../shared/rf/cables.ts';
import { DB_PER_NEPER, M_PER_FT } from '../../../../shared/rf/constants.ts';
import { RfInputError } from '../../../../shared/rf/errors.ts';
import { lineFromCable, lineFromLossSpec, lineFromRlgc, transformLine, type LineModel } from '../../../../shared/rf/line.ts';
import { lNetworkSolutions } from '../../../../shared/rf/match.ts';
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
  type LineSpec,
} from '../../../../shared/schemas/calc.ts';
import { toComplex } from '../../../../shared/schemas/common.ts';
import { ApiError } from '../../../http/problem.ts';

/** Where cable ids are looked up: the built-in catalog now, account-defined cables later. */
export interface CalculationEnv {
  findCable: (id: string) => CableType | undefined;
}

export const catalogOnly: CalculationEnv = { findCable };

/** Turns any of the three line descriptions into the model the domain library transforms through. */
export function resolveLine(spec: LineSpec, frequencyHz: number, env: CalculationEnv, field = 'line'): LineModel {
  const model = lineModelOf(spec, frequencyHz, env, field);
  if (spec.maxVoltageRmsV !== undefined) model.maxVoltageRmsV = spec.maxVoltageRmsV;
  return model;
}

function lineModelOf(spec: LineSpec, frequencyHz: number, env: CalculationEnv, field: string): LineModel {
  const lengthM = spec.lengthM ?? (spec.lengthFt ?? 0) * M_PER_FT;
  if (spec.cableId !== undefined) {
    const cable = env.findCable(spec.cableId);
    if (!cable) throw new RfInputError(`${field}.cableId`, `unknown cable '${spec.cableId}'; GET /api/v1/cables lists the available ids`);
    return lineFromCable(cable, lengthM, frequencyHz);
  }
  if (spec.rlgc !== undefined) return lineFromRlgc(spec.rlgc, lengthM, frequencyHz);
  const lossDbPer100m = spec.lossDbPer100m ?? (spec.lossDbPer100ft ?? 0) / M_PER_FT;
  // The schema guarantees impedanceOhm and velocityFactor for this form.
  return lineFromLossSpec({ impedanceOhm: toComplex(spec.impedanceOhm!), velocityFactor: spec.velocityFactor!, lossDbPer100m, lengthM }, frequencyHz);
}

/** Matched loss of a line model: 20·log10(e)·α·l. */
export function matchedLossDbOf(line: LineModel): number {
  return DB_PER_NEPER * line.propagationPerM.re * line.lengthM;
}

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
    run: (input, env) => transformLine(resolveLine(input.line, input.frequencyHz, env), toComplex(input.loadOhm), input.frequencyHz, input.powerW),
  }),
  refer: calculation({
    request: ReferRequestSchema,
    result: ReferResultSchema,
    run: (input, env) => {
      const matchedLossDb = input.matchedLossDb ?? matchedLossDbOf(resolveLine(input.line!, input.frequencyHz!, env));
      return referReading({ matchedLossDb, direction: input.direction, reading: definedOnly(input.reading) as Parameters<typeof referReading>[0]['reading'] });
    },
  }),
  match: calculation({
    request: MatchRequestSchema,
    result: MatchResultSchema,
    run: (input) => ({ solutions: lNetworkSolutions(toComplex(input.loadOhm), toComplex(input.sourceOhm), input.frequencyHz) }),
  }),
} as const;

export type CalculationName = keyof typeof CALCULATIONS;
