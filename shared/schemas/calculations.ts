import { z } from 'zod';
import {
  ComplexSchema,
  FrequencyHz,
  ImpedanceSchema,
  MismatchLossOutput,
  PowerW,
  ReflectionDetailSchema,
  ReturnLossOutput,
  SwrOutput,
} from './common.ts';
import { forwardIssues, shapeIssue } from './issues.ts';

type RefineCtx = z.RefinementCtx;

function present(value: object, keys: readonly string[]): string[] {
  return keys.filter((k) => (value as Record<string, unknown>)[k] !== undefined);
}

/** Exactly one of several alternatives, each a group of fields that must come together. */
function exactlyOneGroup(value: object, groups: readonly (readonly string[])[], ctx: RefineCtx, what: string): void {
  const used = groups.filter((g) => present(value, g).length > 0);
  if (used.length === 0) {
    shapeIssue(ctx, [], `give ${what}: one of ${groups.map((g) => `{ ${g.join(', ')} }`).join(', ')}`);
    return;
  }
  if (used.length > 1) {
    const names = used.map((g) => g.join(' + '));
    shapeIssue(ctx, [used[1]![0]!], `give only one input, not both ${names[0]} and ${names[1]}`);
    return;
  }
  const group = used[0]!;
  for (const key of group) {
    if ((value as Record<string, unknown>)[key] === undefined) {
      shapeIssue(ctx, [key], `${key} is required together with ${group.filter((k) => k !== key).join(', ')}`);
    }
  }
}

// ---------------------------------------------------------------- mismatch

export const MISMATCH_INPUT_GROUPS = [
  ['swr'],
  ['reflectionMagnitude'],
  ['returnLossDb'],
  ['mismatchLossDb'],
  ['reflectedPowerRatio'],
  ['forwardPowerW', 'reflectedPowerW'],
  ['forwardVoltageV', 'reflectedVoltageV'],
  ['maxVoltageV', 'minVoltageV'],
] as const;

export const MismatchRequestSchema = z
  .strictObject({
    swr: z.number().min(1).optional().meta({ description: 'Standing-wave ratio (≥ 1).', example: 1.5 }),
    reflectionMagnitude: z.number().min(0).max(1).optional().meta({ description: '|Γ|, from 0 (match) to 1 (total reflection).' }),
    returnLossDb: z.number().min(0).optional().meta({ description: 'Return loss in dB (≥ 0).' }),
    mismatchLossDb: z.number().min(0).optional().meta({ description: 'Mismatch loss in dB (≥ 0).' }),
    reflectedPowerRatio: z.number().min(0).max(1).optional().meta({ description: 'Reflected / forward power, 0 to 1.' }),
    forwardPowerW: PowerW.optional().meta({ description: 'Forward power in watts, read at one point on the line.' }),
    reflectedPowerW: PowerW.optional().meta({ description: 'Reflected power in watts, read at the same point (≤ forward).', example: 4 }),
    forwardVoltageV: z.number().min(0).optional().meta({ description: 'Forward-wave detector voltage (any consistent unit of volts).' }),
    reflectedVoltageV: z.number().min(0).optional().meta({ description: 'Reflected-wave detector voltage (≤ forward).' }),
    maxVoltageV: z.number().min(0).optional().meta({ description: 'Standing-wave voltage maximum along the line.' }),
    minVoltageV: z.number().min(0).optional().meta({ description: 'Standing-wave voltage minimum along the line.' }),
  })
  .superRefine((v, ctx) => exactlyOneGroup(v, MISMATCH_INPUT_GROUPS, ctx, 'exactly one mismatch input'))
  .meta({
    id: 'MismatchRequest',
    description: 'Exactly one input: `swr`, `reflectionMagnitude`, `returnLossDb`, `mismatchLossDb`, `reflectedPowerRatio`, or one of the pairs `forwardPowerW` + `reflectedPowerW`, `forwardVoltageV` + `reflectedVoltageV`, `maxVoltageV` + `minVoltageV`.',
    example: { forwardPowerW: 100, reflectedPowerW: 4 },
  });

export const MismatchResultSchema = z
  .object({
    swr: SwrOutput,
    reflectionMagnitude: z.number().meta({ description: '|Γ|.' }),
    returnLossDb: ReturnLossOutput,
    mismatchLossDb: MismatchLossOutput,
    reflectedPowerRatio: z.number().meta({ description: '|Γ|², the fraction of forward power reflected.' }),
    transmittedPowerRatio: z.number().meta({ description: '1 − |Γ|², the fraction of forward power delivered.' }),
    netPowerW: z.number().optional().meta({ description: 'Forward − reflected power, when powers were given.' }),
  })
  .meta({ id: 'MismatchResult' });

// ---------------------------------------------------------------- reflection

export const ReflectionRequestSchema = z
  .strictObject({
    loadOhm: ImpedanceSchema.optional().meta({ description: 'Load impedance ZL in ohms (give this, or `reflection` for the inverse).' }),
    reflection: ComplexSchema.optional().meta({ description: 'Reflection coefficient Γ, for the inverse: the load impedance it implies.' }),
    referenceOhm: ImpedanceSchema.default(50).meta({ description: 'Reference (characteristic) impedance Z0 in ohms; may be complex. Default 50.' }),
  })
  .superRefine((v, ctx) => exactlyOneGroup(v, [['loadOhm'], ['reflection']], ctx, 'the load or its reflection coefficient'))
  .meta({ id: 'ReflectionRequest', example: { loadOhm: { re: 100, im: 50 }, referenceOhm: 50 } });

export const ReflectionResultSchema = z
  .object({
    reflection: ReflectionDetailSchema.meta({ description: 'Voltage reflection coefficient Γ = (ZL − Z0)/(ZL + Z0).' }),
    powerWaveReflection: ReflectionDetailSchema.meta({
      description: 'Power-wave reflection coefficient (ZL − Z0*)/(ZL + Z0) (Kurokawa). Equal to Γ for a real Z0; the mismatch figures are computed from it, so they stay meaningful for a complex Z0.',
    }),
    swr: SwrOutput,
    returnLossDb: ReturnLossOutput,
    mismatchLossDb: MismatchLossOutput,
    reflectedPowerRatio: z.number(),
    transmittedPowerRatio: z.number(),
    loadOhm: ComplexSchema.nullable().meta({ description: 'Load impedance; `null` for an open circuit (Γ = 1).' }),
    admittanceS: ComplexSchema.nullable().meta({ description: 'Load admittance in siemens; `null` for a short circuit.' }),
    referenceOhm: ComplexSchema,
  })
  .meta({ id: 'ReflectionResult' });

// ---------------------------------------------------------------- line

export const RlgcSchema = z
  .strictObject({
    rOhmPerM: z.number().min(0).meta({ description: 'Series resistance per metre (Ω/m) at the frequency.' }),
    lHPerM: z.number().positive().meta({ description: 'Series inductance per metre (H/m).' }),
    gSPerM: z.number().min(0).meta({ description: 'Shunt conductance per metre (S/m).' }),
    cFPerM: z.number().positive().meta({ description: 'Shunt capacitance per metre (F/m).' }),
  })
  .meta({ id: 'Rlgc', description: 'Per-metre primary constants for the telegrapher\'s equations.', example: { rOhmPerM: 0.05, lHPerM: 2.5e-7, gSPerM: 1e-9, cFPerM: 1e-10 } });

const LINE_FORMS = {
  cable: ['cableId'],
  spec: ['impedanceOhm', 'velocityFactor', 'lossDbPer100m', 'lossDbPer100ft'],
  rlgc: ['rlgc'],
} as const;

export const LineSpecSchema = z
  .strictObject({
    cableId: z.string().min(1).max(100).optional().meta({ description: 'A cable from `GET /api/v1/cables` (its loss at the frequency comes from the catalog).', example: 'rg-213' }),
    impedanceOhm: ImpedanceSchema.optional().meta({ description: 'Characteristic impedance Z0 in ohms.' }),
    velocityFactor: z.number().gt(0).max(1).optional().meta({ description: 'Velocity factor, 0 < VF ≤ 1.' }),
    lossDbPer100m: z.number().min(0).optional().meta({ description: 'Matched loss at this frequency, dB per 100 m.' }),
    lossDbPer100ft: z.number().min(0).optional().meta({ description: 'Matched loss at this frequency, dB per 100 ft.' }),
    rlgc: RlgcSchema.optional(),
    lengthM: z.number().min(0).optional().meta({ description: 'Physical length in metres.' }),
    lengthFt: z.number().min(0).optional().meta({ description: 'Physical length in feet.' }),
    maxVoltageRmsV: z
      .number()
      .positive()
      .optional()
      .meta({ description: 'Highest RMS voltage the line (or its connectors) is rated for, V. With `powerW`, a computed voltage above it adds a caution. A catalog or account cable brings its own rating; the lower of the two is checked (a connector rated below the cable, for example).', example: 500 }),
  })
  .superRefine((v, ctx) => {
    const lengths = present(v, ['lengthM', 'lengthFt']);
    if (lengths.length === 0) shapeIssue(ctx, ['lengthM'], 'give the line length as lengthM or lengthFt');
    if (lengths.length === 2) shapeIssue(ctx, ['lengthFt'], 'give the length as lengthM or lengthFt, not both');
    const forms = (Object.keys(LINE_FORMS) as (keyof typeof LINE_FORMS)[]).filter((f) => present(v, LINE_FORMS[f]).length > 0);
    if (forms.length === 0) {
      shapeIssue(ctx, [], 'describe the line by cableId, by impedanceOhm + velocityFactor + lossDbPer100m (or lossDbPer100ft), or by rlgc');
      return;
    }
    if (forms.length > 1) {
      shapeIssue(ctx, [LINE_FORMS[forms[1]!][0]], `describe the line one way only, not both by ${forms[0]} and by ${forms[1]}`);
      return;
    }
    if (forms[0] === 'spec') {
      if (v.impedanceOhm === undefined) shapeIssue(ctx, ['impedanceOhm'], 'impedanceOhm is required with velocityFactor and loss');
      if (v.velocityFactor === undefined) shapeIssue(ctx, ['velocityFactor'], 'velocityFactor is required with impedanceOhm and loss');
      const losses = present(v, ['lossDbPer100m', 'lossDbPer100ft']);
      if (losses.length === 0) shapeIssue(ctx, ['lossDbPer100m'], 'give the matched loss as lossDbPer100m or lossDbPer100ft (0 for a lossless line)');
      if (losses.length === 2) shapeIssue(ctx, ['lossDbPer100ft'], 'give the loss as lossDbPer100m or lossDbPer100ft, not both');
    }
  })
  .meta({
    id: 'LineSpec',
    description:
      'A feed line, one of: `{ cableId, lengthM | lengthFt }`; `{ impedanceOhm, velocityFactor, lossDbPer100m | lossDbPer100ft, lengthM | lengthFt }` (matched loss at the frequency); `{ rlgc, lengthM | lengthFt }` (telegrapher\'s equations, complex Z0). Any of them may add `maxVoltageRmsV`, the rating the computed voltage is checked against.',
    example: { cableId: 'rg-213', lengthM: 30 },
  });

export type LineSpec = z.infer<typeof LineSpecSchema>;

/** Most sections one feed line may have; a station run has a handful. */
export const MAX_FEEDLINE_SECTIONS = 32;

const LINE_FIELDS = Object.keys(LineSpecSchema.shape) as (keyof typeof LineSpecSchema.shape)[];

/**
 * One section of a feed line: a length of cable in any `LineSpec` form, or a connector/adapter as a
 * fixed insertion loss. The connector form is recognised by `insertionLossDb`.
 */
export const FeedlineSectionSchema = z
  .strictObject({
    ...LineSpecSchema.shape,
    insertionLossDb: z.number().min(0).max(60).optional().meta({ description: 'Connector or adapter: its matched insertion loss in dB (no length, no phase).', example: 0.1 }),
    label: z.string().trim().min(1).max(100).optional().meta({ description: 'What the section is, e.g. "N bulkhead at the hut wall". Required for a connector.', example: 'N bulkhead at the hut wall' }),
  })
  .superRefine((v, ctx) => {
    if (v.insertionLossDb !== undefined) {
      for (const field of LINE_FIELDS) {
        if (field === 'impedanceOhm' || field === 'maxVoltageRmsV') continue;
        if (v[field] !== undefined) {
          shapeIssue(ctx, [field], `a connector section has insertionLossDb, label and optionally impedanceOhm and maxVoltageRmsV only; put ${field} in a cable section of its own`);
        }
      }
      if (v.label === undefined) shapeIssue(ctx, ['label'], 'name the connector or adapter in label, e.g. "PL-259 to N adapter"');
      return;
    }
    const { label: _label, insertionLossDb: _loss, ...line } = v;
    const parsed = LineSpecSchema.safeParse(line);
    if (!parsed.success) forwardIssues(ctx, parsed.error.issues);
  })
  .meta({
    id: 'FeedlineSection',
    description:
      'One section, listed from the transmitter end. A cable: `{ cableId, lengthM | lengthFt }`, `{ impedanceOhm, velocityFactor, lossDbPer100m | lossDbPer100ft, lengthM | lengthFt }` or `{ rlgc, lengthM | lengthFt }`, each with an optional `label`. ' +
      'A connector or adapter: `{ insertionLossDb, label }` (a matched loss with no length; its impedance defaults to the nearest cable section\'s Z0, or give `impedanceOhm`). Any section may give `maxVoltageRmsV`, its voltage rating: with `powerW`, a computed voltage above it adds a caution.',
    example: { cableId: 'rg-213', lengthM: 28, label: 'Hut to mast foot' },
  });

export type FeedlineSection = z.infer<typeof FeedlineSectionSchema>;

/** True for the connector form of a section. */
export function isConnectorSection(section: FeedlineSection): section is FeedlineSection & { insertionLossDb: number; label: string } {
  return section.insertionLossDb !== undefined;
}

export const LineSectionsSchema = z
  .array(FeedlineSectionSchema)
  .min(1)
  .max(MAX_FEEDLINE_SECTIONS)
  .superRefine((sections, ctx) => {
    if (sections.length > 0 && sections.every((s) => s.insertionLossDb !== undefined)) {
      ctx.addIssue({ code: 'custom', path: [], message: 'a feed line needs at least one cable section besides its connectors' });
    }
  })
  .meta({ description: `Sections from the transmitter end to the antenna (1 to ${MAX_FEEDLINE_SECTIONS}).` });

/** A line as one `LineSpec`, or as sections from the transmitter end (cables and connectors). */
export const LineOrSectionsSchema = z
  .union([LineSpecSchema, LineSectionsSchema], {
    error: 'describe the line as one object ({ cableId, lengthM }, { impedanceOhm, velocityFactor, lossDbPer100m, lengthM } or { rlgc, lengthM }) or as an array of sections from the transmitter end',
  })
  .meta({ description: 'One `LineSpec`, or an array of `FeedlineSection`s from the transmitter end (cables of different kinds joined by connectors), as in a saved feed line.' });

export const LineRequestSchema = z
  .strictObject({
    frequencyHz: FrequencyHz,
    line: LineOrSectionsSchema,
    loadOhm: ImpedanceSchema.meta({ description: 'Load impedance at the far (antenna) end, ohms.' }),
    powerW: PowerW.optional().meta({ description: 'Net power into the line input (W). Adds `power` and `peaks` to the result.' }),
  })
  .meta({ id: 'LineRequest', example: { frequencyHz: 14_200_000, line: { cableId: 'rg-213', lengthM: 30 }, loadOhm: { re: 72, im: 18 }, powerW: 100 } });

const EndReportSchema = z
  .object({ reflection: ReflectionDetailSchema, swr: SwrOutput, returnLossDb: ReturnLossOutput, impedanceOhm: ComplexSchema })
  .meta({ id: 'LineEnd', description: 'Mismatch at one end of the line, against the line\'s Z0.' });

export const LineResultSchema = z
  .object({
    inputOhm: ComplexSchema.meta({ description: 'Impedance seen at the line input.' }),
    characteristicOhm: ComplexSchema,
    electricalLengthDeg: z.number(),
    lengthWavelengths: z.number(),
    matchedLossDb: z.number().meta({ description: 'Loss of the line when matched.' }),
    totalLossDb: z.number().nullable().meta({ description: 'Loss with this load: 10·log10(Pin/Pload); `null` when no power reaches the load.' }),
    mismatchExtraLossDb: z.number().nullable().meta({ description: 'Extra loss caused by the mismatch: total − matched; `null` when `totalLossDb` is.' }),
    atLoad: EndReportSchema,
    atInput: EndReportSchema,
    power: z.object({ inputW: z.number(), loadW: z.number(), lineDissipationW: z.number() }).optional(),
    peaks: z
      .object({ maxVoltageV: z.number(), maxCurrentA: z.number(), maxVoltageAtM: z.number(), maxCurrentAtM: z.number() })
      .optional()
      .meta({ description: 'RMS voltage and current maxima on the line and their distance from the input.' }),
    cautions: z.array(z.string()).meta({ description: 'Safety cautions, e.g. a voltage above the cable\'s rating. Show them to the user.' }),
    // A getter, because the sections are LineResults themselves (zod's recursive-object form).
    get sections() {
      return z
        .array(LineResultSchema)
        .optional()
        .meta({ description: 'Only when `line` was given as sections: each section on its own, from the transmitter end; a section\'s load is the next one\'s input.' });
    },
  })
  .meta({ id: 'LineResult' });

export const FeedlineLineResultSchema = LineResultSchema.extend({
  sections: z.array(LineResultSchema).meta({ description: 'Each section on its own, from the transmitter end; a section\'s load is the next one\'s input.' }),
}).meta({ id: 'FeedlineLineResult', description: 'The whole feed line (totals end to end) and each section.' });

// ---------------------------------------------------------------- refer

export const ReadingSchema = z
  .strictObject({
    swr: z.number().min(1).optional().meta({ description: 'SWR read at this end.' }),
    forwardPowerW: PowerW.optional().meta({ description: 'Forward power read at this end, W.', example: 100 }),
    reflectedPowerW: PowerW.optional().meta({ description: 'Reflected power read at this end (≤ forward), W.', example: 11 }),
  })
  .superRefine((v, ctx) => exactlyOneGroup(v, [['swr'], ['forwardPowerW', 'reflectedPowerW']], ctx, 'a reading'))
  .meta({ id: 'Reading', description: '`{ swr }` or `{ forwardPowerW, reflectedPowerW }`.', example: { forwardPowerW: 100, reflectedPowerW: 11 } });

export const ReferRequestSchema = z
  .strictObject({
    frequencyHz: FrequencyHz.optional(),
    line: LineOrSectionsSchema.optional(),
    matchedLossDb: z.number().min(0).optional().meta({ description: 'The line\'s matched loss, instead of `frequencyHz` + `line`.' }),
    direction: z.enum(['inputToLoad', 'loadToInput']).meta({ description: '`inputToLoad`: the reading was taken at the transmitter; `loadToInput`: at the antenna.' }),
    reading: ReadingSchema,
  })
  .superRefine((v, ctx) => {
    const byLine = v.frequencyHz !== undefined || v.line !== undefined;
    if (v.matchedLossDb !== undefined && byLine) {
      shapeIssue(ctx, ['matchedLossDb'], 'give matchedLossDb or frequencyHz + line, not both');
    } else if (v.matchedLossDb === undefined && !byLine) {
      shapeIssue(ctx, ['matchedLossDb'], 'give the line: matchedLossDb, or frequencyHz + line');
    } else if (byLine && (v.frequencyHz === undefined || v.line === undefined)) {
      shapeIssue(ctx, [v.line === undefined ? 'line' : 'frequencyHz'], 'frequencyHz and line go together');
    }
  })
  .meta({ id: 'ReferRequest', example: { frequencyHz: 7_100_000, line: { cableId: 'rg-58', lengthM: 40 }, direction: 'inputToLoad', reading: { forwardPowerW: 100, reflectedPowerW: 11 } } });

const EndFiguresSchema = z
  .object({
    swr: SwrOutput,
    reflectionMagnitude: z.number(),
    returnLossDb: ReturnLossOutput,
    forwardPowerW: z.number().optional(),
    reflectedPowerW: z.number().optional(),
    netPowerW: z.number().optional(),
  })
  .meta({ id: 'EndFigures' });

export const ReferResultSchema = z
  .object({
    atInput: EndFiguresSchema.meta({ description: 'At the line\'s input, the transmitter end.' }),
    atLoad: EndFiguresSchema.meta({ description: 'At the load, the antenna end.' }),
    matchedLossDb: z.number().meta({ description: 'Matched loss of the line at the frequency (dB), as given or from the line.' }),
    totalLossDb: z
      .number()
      .nullable()
      .meta({ description: 'Loss of the line with this mismatch (dB): net power in over net power delivered to the load; `null` at total reflection at the load (|Γ| = 1), where no net power arrives and the loss is unbounded.' }),
    lineDissipationW: z.number().optional().meta({ description: 'Power turned into heat in the line (W), when the reading has powers.' }),
    sectionsMatchedLossDb: z
      .array(z.number())
      .optional()
      .meta({ description: 'When the line was given as sections: the matched loss of each at the frequency, from the transmitter end; they add up to `matchedLossDb`.' }),
    peaks: z
      .object({ maxVoltageV: z.number(), maxCurrentA: z.number(), maxVoltageAtM: z.number(), maxCurrentAtM: z.number() })
      .optional()
      .meta({
        description:
          'When the reading has powers and the line is described (not only `matchedLossDb`): the highest RMS voltage and current the line can carry, from the standing wave\'s envelope (forward and reflected waves in phase), and where from the input; a reading has no phase, so the crest may lie up to a quarter wavelength from that place.',
      }),
    cautions: z.array(z.string()).meta({ description: 'Safety cautions, as on POST /api/v1/line: a voltage above the line\'s rating, or high on a line with none. Show them to the user.' }),
  })
  .meta({ id: 'ReferResult' });

// ---------------------------------------------------------------- cables

export const AttenuationModelSchema = z
  .union([
    z.object({ kind: z.literal('k1k2'), k1: z.number(), k2: z.number() }).meta({ description: 'loss dB/100 m = k1·√f + k2·f with f in MHz.' }),
    z.object({ kind: z.literal('table'), points: z.array(z.object({ frequencyHz: z.number(), lossDbPer100m: z.number() })) }).meta({ description: 'Measured points; log-log interpolation between them.' }),
  ])
  .meta({ id: 'AttenuationModel' });

export const CableSchema = z
  .object({
    id: z.string(),
    designation: z.string().meta({ description: 'Generic trade designation.' }),
    impedanceOhm: z.number(),
    velocityFactor: z.number(),
    attenuation: AttenuationModelSchema,
    maxVoltageRmsV: z.number().nullable().meta({ description: 'Maximum operating voltage (RMS) where known.' }),
    source: z.string().meta({ description: 'Where the figures come from.' }),
    notes: z.string().optional(),
  })
  .meta({ id: 'Cable' });

export const CableIdParamsSchema = z.object({ id: z.string().min(1).max(100) });

export const CableAttenuationQuerySchema = z
  .strictObject({
    frequencyHz: z.coerce.number().positive().meta({ description: 'Frequency in hertz.', example: 14_200_000 }),
    lengthM: z.coerce.number().min(0).optional().meta({ description: 'Length in metres (for `lossDb`).', example: 30 }),
    lengthFt: z.coerce.number().min(0).optional().meta({ description: 'Length in feet (for `lossDb`).' }),
  })
  .superRefine((v, ctx) => {
    if (v.lengthM !== undefined && v.lengthFt !== undefined) shapeIssue(ctx, ['lengthFt'], 'give lengthM or lengthFt, not both');
  });

export const CableAttenuationSchema = z
  .object({
    cableId: z.string(),
    frequencyHz: z.number(),
    lossDbPer100m: z.number(),
    lossDbPer100ft: z.number(),
    lengthM: z.number().optional(),
    lossDb: z.number().optional().meta({ description: 'Matched loss of the given length; present when a length was given.' }),
  })
  .meta({ id: 'CableAttenuation' });

// ---------------------------------------------------------------- match

export const MatchRequestSchema = z
  .strictObject({
    frequencyHz: FrequencyHz,
    loadOhm: ImpedanceSchema.meta({ description: 'Load impedance to be matched.' }),
    sourceOhm: ImpedanceSchema.default(50).meta({ description: 'Source impedance; the network presents its conjugate. Default 50.' }),
    powerW: PowerW.optional().meta({ description: 'Power delivered into the network from the source (RMS W). Adds to each element the voltage across it and the current through it, and a caution.', example: 100 }),
  })
  .meta({ id: 'MatchRequest', example: { frequencyHz: 3_650_000, loadOhm: { re: 12, im: -30 }, sourceOhm: 50, powerW: 100 } });

export const MatchElementSchema = z
  .object({
    position: z.enum(['series', 'shunt']),
    kind: z.enum(['inductor', 'capacitor']),
    reactanceOhm: z.number(),
    valueH: z.number().optional(),
    valueF: z.number().optional(),
    voltageRmsV: z.number().optional().meta({ description: 'With `powerW`: RMS voltage across the element, V.' }),
    voltagePeakV: z.number().optional().meta({ description: 'With `powerW`: peak voltage across it (√2 × RMS), V.' }),
    currentRmsA: z.number().optional().meta({ description: 'With `powerW`: RMS current through it, A.' }),
    reactivePowerVar: z.number().optional().meta({ description: 'With `powerW`: reactive power X·I² it circulates, var (positive for an inductor, negative for a capacitor).' }),
  })
  .meta({ id: 'MatchElement' });

export const MatchResultSchema = z
  .object({
    solutions: z.array(
      z
        .object({
          topology: z.enum(['shuntAtLoad', 'seriesAtLoad']).meta({ description: '`shuntAtLoad`: shunt element across the load, series element toward the source; `seriesAtLoad`: the reverse.' }),
          elements: z.array(MatchElementSchema).meta({ description: 'Ordered from the source to the load.' }),
          sourceSide: z.enum(['series', 'shunt']).meta({ description: 'Which element faces the source (the first of `elements`).' }),
          inputOhm: ComplexSchema.meta({ description: 'Input impedance of network + load (the source\'s conjugate).' }),
        })
        .meta({ id: 'MatchSolution' }),
    ),
    cautions: z.array(z.string()).meta({ description: 'Safety cautions (with `powerW`: component ratings need margin above the figures). Show them to the user.' }),
  })
  .meta({ id: 'MatchResult' });
