import type { FaultLine } from '../schemas/fault.ts';
import { evenFrequencyStep, faultDistance, type FaultWindow, type ReflectionSample } from '../sweep/fault-distance.ts';
import type { CableLookup } from './cable-lookup.ts';
import { faultLineOf } from './line-models.ts';

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
export function faultDistanceOf(samples: readonly ReflectionSample[], options: FaultOptions, cables: CableLookup) {
  evenFrequencyStep(samples);
  const centreHz = (samples[0]!.frequencyHz + samples[samples.length - 1]!.frequencyHz) / 2;
  const line = faultLineOf(options.line, centreHz, cables);
  const compensateLoss = options.compensateLoss ?? (line.lossDbPer100m !== undefined && line.lossDbPer100m > 0);
  return faultDistance(samples, { velocityFactor: line.velocityFactor, lossDbPer100m: line.lossDbPer100m, window: options.window, compensateLoss, maxDistanceM: options.maxDistanceM });
}
