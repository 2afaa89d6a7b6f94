import { parseSweepCsv } from './csv.ts';
import type { SweepPointInput } from './points.ts';
import { parseTouchstone } from './touchstone.ts';

export type FileFormat = 'touchstone' | 'csv';

/** The format of a sweep file: by its extension, else CSV when a header names `frequency_hz`, else Touchstone. */
export function detectFormat(fileName: string | undefined, text: string): FileFormat {
  const ext = /\.([A-Za-z0-9]+)$/.exec(fileName ?? '')?.[1]?.toLowerCase();
  if (ext === 's1p' || ext === 'ts') return 'touchstone';
  if (ext === 'csv') return 'csv';
  return /frequency_hz/i.test(text.slice(0, 4096)) ? 'csv' : 'touchstone';
}

/**
 * Reads the text of a sweep file in the given format (or the detected one); a `referenceOhm` given
 * overrides the file's own. A file that cannot be read throws SweepFormatError with the line.
 */
export function readSweepText(
  text: string,
  options: { fileName?: string | undefined; format?: FileFormat | undefined; referenceOhm?: number | undefined },
): { format: FileFormat; referenceOhm: number; points: SweepPointInput[] } {
  const format = options.format ?? detectFormat(options.fileName, text);
  const sweep = format === 'touchstone' ? parseTouchstone(text) : parseSweepCsv(text, { referenceOhm: options.referenceOhm ?? 50 });
  return { format, referenceOhm: options.referenceOhm ?? sweep.referenceOhm, points: sweep.points };
}
