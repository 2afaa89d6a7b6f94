import { analyseSweep, type AnalysedPoint } from '../../../../shared/sweep/analyse.ts';
import { analysedCsvRows } from '../../../../shared/sweep/csv.ts';
import { unpackPoints } from './sweeps.points.ts';

/** How a stream of every point is written. */
export type ExportFormat = 'csv' | 'ndjson';

/** Analysed figures of packed points: per point they do not depend on the neighbours, so a page or slice analyses alone. */
export function analysedPointsOf(packed: Buffer, referenceOhm: number): AnalysedPoint[] {
  if (packed.length === 0) return [];
  return analyseSweep(unpackPoints(packed), { referenceOhm }).points;
}

/** One slice of an export, as the bytes to write: CSV rows (the header is written once, first) or NDJSON lines. */
export function exportChunk(packed: Buffer, referenceOhm: number, format: ExportFormat): Buffer {
  const points = analysedPointsOf(packed, referenceOhm);
  if (format === 'csv') return Buffer.from(analysedCsvRows(points));
  let out = '';
  for (const p of points) out += `${JSON.stringify(p)}\n`;
  return Buffer.from(out);
}
