import type { Complex } from '../rf/complex.ts';
import { cableLossDbPer100m } from '../rf/cables.ts';
import { M_PER_FT } from '../rf/constants.ts';
import { RfInputError } from '../rf/errors.ts';
import { attenuatorSection, lineFromCable, lineFromLossSpec, lineFromRlgc, type LineModel } from '../rf/line.ts';
import { isConnectorSection, type FeedlineSection, type LineSpec } from '../schemas/calculations.ts';
import type { FaultLine } from '../schemas/fault.ts';
import { toComplex } from '../schemas/common.ts';
import type { CableLookup } from './cable-lookup.ts';

// Line descriptions of requests (one LineSpec, or sections) turned into the models shared/rf transforms
// through; used by the single calculations, batch, feed lines, sweeps and the demo seed.

/** Turns any of the three line descriptions into the model the domain library transforms through. */
export function resolveLine(spec: LineSpec, frequencyHz: number, cables: CableLookup, field = 'line'): LineModel {
  const model = lineModelOf(spec, frequencyHz, cables, field);
  // A given rating can only lower a cable's own: it stands for the weakest part of the run.
  if (spec.maxVoltageRmsV !== undefined) {
    const own = model.maxVoltageRmsV;
    model.maxVoltageRmsV = typeof own === 'number' ? Math.min(own, spec.maxVoltageRmsV) : spec.maxVoltageRmsV;
  }
  return model;
}

function lineModelOf(spec: LineSpec, frequencyHz: number, cables: CableLookup, field: string): LineModel {
  const lengthM = spec.lengthM ?? (spec.lengthFt ?? 0) * M_PER_FT;
  if (spec.cableId !== undefined) {
    const cable = cables.findCable(spec.cableId);
    if (!cable) throw new RfInputError(`${field}.cableId`, `unknown cable '${spec.cableId}'; GET /api/v1/cables lists the available ids`);
    return lineFromCable(cable, lengthM, frequencyHz);
  }
  if (spec.rlgc !== undefined) return lineFromRlgc(spec.rlgc, lengthM, frequencyHz);
  const lossDbPer100m = spec.lossDbPer100m ?? (spec.lossDbPer100ft ?? 0) / M_PER_FT;
  // The schema guarantees impedanceOhm and velocityFactor for this form.
  return lineFromLossSpec({ impedanceOhm: toComplex(spec.impedanceOhm!), velocityFactor: spec.velocityFactor!, lossDbPer100m, lengthM }, frequencyHz);
}

function lineSpecOf(section: FeedlineSection): LineSpec {
  const { label: _label, insertionLossDb: _loss, ...spec } = section;
  return spec as LineSpec;
}

/**
 * The sections of a feed line as line models at one frequency, from the transmitter end. A connector
 * is a matched fixed loss (attenuatorSection) against its own `impedanceOhm`, or else against the Z0
 * of the nearest cable section (towards the antenna first), since a connector is made for the line it joins.
 * @example sectionModels([{ cableId: 'rg-213', lengthM: 28 }, { insertionLossDb: 0.1, label: 'N barrel' }], 7.1e6, catalogOnly)
 */
export function sectionModels(sections: readonly FeedlineSection[], frequencyHz: number, cables: CableLookup, field = 'sections'): LineModel[] {
  const models: (LineModel | undefined)[] = sections.map((s, i) => (isConnectorSection(s) ? undefined : resolveLine(lineSpecOf(s), frequencyHz, cables, `${field}.${i}`)));
  const nearestZ0 = (i: number): Complex => {
    for (let k = i + 1; k < models.length; k++) if (models[k]) return models[k]!.characteristicOhm;
    for (let k = i - 1; k >= 0; k--) if (models[k]) return models[k]!.characteristicOhm;
    throw new RfInputError(field, 'A feed line needs at least one cable section besides its connectors.');
  };
  return sections.map((s, i) => {
    if (!isConnectorSection(s)) return models[i]!;
    const z0 = s.impedanceOhm !== undefined ? toComplex(s.impedanceOhm) : nearestZ0(i);
    return { ...attenuatorSection(s.insertionLossDb, z0, `${field}.${i}`), label: s.label, maxVoltageRmsV: s.maxVoltageRmsV };
  });
}

/** The models of a request's `line`: one for a LineSpec, one per section for sections (errors name `line.2.cableId`). */
export function lineModelsOf(line: LineSpec | readonly FeedlineSection[], frequencyHz: number, cables: CableLookup, field = 'line'): LineModel[] {
  return Array.isArray(line) ? sectionModels(line, frequencyHz, cables, field) : [resolveLine(line as LineSpec, frequencyHz, cables, field)];
}

/**
 * The velocity factor and loss of a line under a distance-to-fault test; a cable's loss is taken at
 * the centre of the sweep (errors name `line.cableId`).
 * @example faultLineOf({ cableId: 'rg-213' }, 500e6, catalogOnly) // { velocityFactor: 0.66, lossDbPer100m: ≈ 17.2 }
 */
export function faultLineOf(line: FaultLine, centreHz: number, cables: CableLookup): { velocityFactor: number; lossDbPer100m?: number } {
  if (line.cableId === undefined) {
    const lossDbPer100m = line.lossDbPer100m ?? (line.lossDbPer100ft === undefined ? undefined : line.lossDbPer100ft / M_PER_FT);
    return lossDbPer100m === undefined ? { velocityFactor: line.velocityFactor! } : { velocityFactor: line.velocityFactor!, lossDbPer100m };
  }
  const cable = cables.findCable(line.cableId);
  if (!cable) throw new RfInputError('line.cableId', `unknown cable '${line.cableId}'; GET /api/v1/cables lists the available ids`);
  try {
    return { velocityFactor: cable.velocityFactor, lossDbPer100m: cableLossDbPer100m(cable, centreHz) };
  } catch (err) {
    if (err instanceof RfInputError) throw new RfInputError('line.cableId', `${err.message} (the loss is taken at the centre of the sweep, ${centreHz} Hz)`);
    throw err;
  }
}
