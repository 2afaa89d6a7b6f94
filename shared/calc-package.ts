/**
 * The public surface of @gammaline/calc, the offline package `npm run offline:pack` builds from
 * shared/ (scripts/offline-pack.mjs). The server never imports this file: it imports the modules
 * themselves. Everything here is pure and works without a network; cables are the built-in catalog.
 */

/** The package's version: the Gammaline release whose API answers it reproduces. */
export { APP_VERSION as VERSION, API_PATH_VERSION as API_VERSION } from './version.ts';

// The main entry: one calculation answered exactly as a batch item of POST /api/v1/batch.
export { calculate, calculateItem, type CalculationInput, type CalculationOutput, type FaultLog, type ItemOutcome } from './calculations/calculate.ts';
export { CALCULATION_NAMES, CALCULATIONS, calculationNamed, type Calculation, type CalculationName } from './calculations/table.ts';
export { catalogOnly, type CableLookup } from './calculations/cable-lookup.ts';
export { assertFinite, NonFiniteResultError } from './calculations/finite.ts';
export { faultLineOf, lineModelsOf, resolveLine, sectionModels } from './calculations/line-models.ts';
export { referThroughModels, sectionMatchedLossDb, type ReferReading } from './calculations/referral.ts';
export { PROBLEM_KINDS, ProblemError, problemType, type FieldIssue, type Problem, type ProblemKind } from './problems/problem.ts';

// The typed lower-level functions (they throw RfInputError naming the field instead of answering a problem).
export * from './rf/cables.ts';
export * from './rf/complex.ts';
export * from './rf/constants.ts';
export * from './rf/errors.ts';
export * from './rf/line.ts';
export * from './rf/match.ts';
export * from './rf/mismatch.ts';
export * from './rf/refer.ts';
export * from './rf/reflection.ts';

// The request and result schemas of the calculations (zod), as the API documents them.
export * from './schemas/batch.ts';
export * from './schemas/calculations.ts';
export * from './schemas/common.ts';
export * from './schemas/fault.ts';

// The sweep readers (Touchstone, CSV) and analysis: bands, resonances, mask verdict, distance to fault.
export * from './sweep/index.ts';
export { detectFormat, readSweepText, type FileFormat } from './sweep/file-format.ts';
