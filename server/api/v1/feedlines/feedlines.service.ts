import type { Complex } from '../../../../shared/rf/complex.ts';
import { DB_PER_NEPER, M_PER_FT } from '../../../../shared/rf/constants.ts';
import { RfInputError } from '../../../../shared/rf/errors.ts';
import { attenuatorSection, type LineModel } from '../../../../shared/rf/line.ts';
import { toComplex } from '../../../../shared/schemas/common.ts';
import { isConnectorSection, type FeedlineSection } from '../../../../shared/schemas/feedlines.ts';
import type { LineSpec } from '../../../../shared/schemas/calc.ts';
import { resolveLine, type CalculationEnv } from '../calc/operations.ts';

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
export function sectionModels(sections: readonly FeedlineSection[], frequencyHz: number, env: CalculationEnv, field = 'sections'): LineModel[] {
  const models: (LineModel | undefined)[] = sections.map((s, i) => (isConnectorSection(s) ? undefined : resolveLine(lineSpecOf(s), frequencyHz, env, `${field}.${i}`)));
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

/** Matched loss of one section: 20·log10(e)·α·l plus any lumped loss. */
export function sectionMatchedLossDb(model: LineModel): number {
  return DB_PER_NEPER * model.propagationPerM.re * model.lengthM + (model.fixedLossDb ?? 0);
}

/** Physical length of the cable sections in metres. */
export function feedlineLengthM(sections: readonly FeedlineSection[]): number {
  let total = 0;
  for (const s of sections) if (!isConnectorSection(s)) total += s.lengthM ?? (s.lengthFt ?? 0) * M_PER_FT;
  return total;
}

/** Refuses cable ids that are neither in the catalog nor among the organisation's cables. */
export function assertCablesKnown(sections: readonly FeedlineSection[], env: CalculationEnv, field = 'sections'): void {
  sections.forEach((s, i) => {
    if (s.cableId !== undefined && !env.findCable(s.cableId)) {
      throw new RfInputError(`${field}.${i}.cableId`, `unknown cable '${s.cableId}'; GET /api/v1/cables lists the catalog and your organisation's cables`);
    }
  });
}
