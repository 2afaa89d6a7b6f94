import { DB_PER_NEPER } from '../rf/constants.ts';
import { readingPeaks, type LineModel } from '../rf/line.ts';
import { referReading } from '../rf/refer.ts';

/** Matched loss of one section: 20·log10(e)·α·l plus any lumped loss. */
export function sectionMatchedLossDb(model: LineModel): number {
  return DB_PER_NEPER * model.propagationPerM.re * model.lengthM + (model.fixedLossDb ?? 0);
}

export type ReferReading = Parameters<typeof referReading>[0]['reading'];

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
