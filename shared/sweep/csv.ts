import type { Complex } from '../rf/complex.ts';
import type { AnalysedPoint } from './analyse.ts';
import { SweepFormatError } from './errors.ts';
import { impedanceAgainst, MAX_SWEEP_POINTS, reflectionAgainst, type Sweep, type SweepPoint } from './points.ts';

const NUMBER = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;
const CONTROL = /[\x00-\x08\x0B\x0C\x0E-\x1F\x7F]/;

/** Splits one row, honouring RFC 4180 quotes ("" inside quotes is one quote); cells are trimmed. */
function cells(line: string, delimiter: string): string[] {
  if (!line.includes('"')) return line.split(delimiter).map((c) => c.trim());
  const out: string[] = [];
  let cell = '';
  let quoted = false;
  for (let i = 0; i < line.length; i++) {
    const ch = line[i] as string;
    if (quoted) {
      if (ch === '"' && line[i + 1] === '"') {
        cell += '"';
        i++;
      } else if (ch === '"') quoted = false;
      else cell += ch;
    } else if (ch === '"') quoted = true;
    else if (ch === delimiter) {
      out.push(cell.trim());
      cell = '';
    } else cell += ch;
  }
  out.push(cell.trim());
  return out;
}

/**
 * Reads a sweep from CSV with a header row naming the columns `frequency_hz, r_ohm, x_ohm`
 * (impedance in ohms) or `frequency_hz, s11_re, s11_im` (reflection against `referenceOhm`), in any
 * order, names case-insensitive with surrounding whitespace or quotes tolerated; comma- or
 * semicolon-separated (the header decides); blank lines and lines starting with `#` are skipped;
 * other columns are ignored. Frequencies must strictly increase. Errors are SweepFormatError with
 * the 1-based line.
 * @example parseSweepCsv('frequency_hz,r_ohm,x_ohm\n7100000,75,0\n').points[0].reflection // { re: 0.2, im: 0 }
 */
export function parseSweepCsv(text: string, options: { referenceOhm?: number } = {}): Sweep {
  if (typeof text !== 'string') throw new SweepFormatError(1, 'the upload is not text; send the CSV as text.');
  const referenceOhm = options.referenceOhm ?? 50;
  if (!Number.isFinite(referenceOhm) || referenceOhm <= 0) {
    throw new SweepFormatError(1, 'the reference resistance for this CSV must be greater than 0 ohm (for example 50).');
  }
  const lines = (text.charCodeAt(0) === 0xfeff ? text.slice(1) : text).split(/\r\n|\n|\r/);
  let delimiter = '';
  let fCol = -1;
  let aCol = -1;
  let bCol = -1;
  let impedanceForm = true;
  let width = 0;
  let headerLine = 0;
  const points: SweepPoint[] = [];
  let previousHz = -Infinity;

  for (let i = 0; i < lines.length; i++) {
    const lineNo = i + 1;
    const raw = lines[i] as string;
    if (CONTROL.test(raw)) {
      throw new SweepFormatError(lineNo, 'the line holds binary (non-text) bytes; this is not a CSV text file.');
    }
    const content = raw.trim();
    if (content === '' || content[0] === '#') continue;

    if (headerLine === 0) {
      const hasSemicolon = content.includes(';');
      if (hasSemicolon && content.includes(',')) {
        throw new SweepFormatError(lineNo, 'the header mixes commas and semicolons; separate the column names with one of them.');
      }
      delimiter = hasSemicolon ? ';' : ',';
      const names = cells(content, delimiter).map((c) => c.toLowerCase());
      const find = (name: string): number => {
        const at = names.indexOf(name);
        if (at !== -1 && names.indexOf(name, at + 1) !== -1) throw new SweepFormatError(lineNo, `the column ${name} appears twice; keep one.`);
        return at;
      };
      fCol = find('frequency_hz');
      const r = find('r_ohm');
      const x = find('x_ohm');
      const sr = find('s11_re');
      const si = find('s11_im');
      const hasZ = r !== -1 || x !== -1;
      const hasS = sr !== -1 || si !== -1;
      if (fCol === -1 || (hasZ && hasS) || (hasZ && (r === -1 || x === -1)) || (hasS && (sr === -1 || si === -1)) || (!hasZ && !hasS)) {
        throw new SweepFormatError(
          lineNo,
          'the header must name the columns "frequency_hz, r_ohm, x_ohm" (impedance in ohms) or "frequency_hz, s11_re, s11_im" (reflection coefficient), in one form only.',
        );
      }
      impedanceForm = hasZ;
      aCol = hasZ ? r : sr;
      bCol = hasZ ? x : si;
      width = names.length;
      headerLine = lineNo;
      continue;
    }

    const row = cells(content, delimiter);
    for (let k = width; k < row.length; k++) {
      if (row[k] !== '') throw new SweepFormatError(lineNo, `the row has ${row.length} cells but the header names ${width} columns.`);
    }
    const read = (col: number, name: string): number => {
      const cell = row[col];
      if (cell === undefined || cell === '') {
        throw new SweepFormatError(lineNo, `missing value in column ${name}; every row needs a frequency and two values.`);
      }
      if (!NUMBER.test(cell)) {
        const hint = delimiter === ';' && /^[+-]?\d+,\d+$/.test(cell) ? ' Use a decimal point, not a decimal comma.' : '';
        throw new SweepFormatError(lineNo, `"${cell}" in column ${name} is not a number.${hint}`);
      }
      const v = Number(cell);
      if (!Number.isFinite(v)) throw new SweepFormatError(lineNo, `"${cell}" in column ${name} is too large to be a finite number.`);
      return v;
    };
    const frequencyHz = read(fCol, 'frequency_hz');
    const a = read(aCol, impedanceForm ? 'r_ohm' : 's11_re');
    const b = read(bCol, impedanceForm ? 'x_ohm' : 's11_im');
    if (frequencyHz < 0) throw new SweepFormatError(lineNo, 'the frequency cannot be negative.');
    if (frequencyHz <= previousHz) {
      throw new SweepFormatError(lineNo, `the frequency ${frequencyHz} Hz is not above the one before it; frequencies must strictly increase.`);
    }
    if (points.length === MAX_SWEEP_POINTS) {
      throw new SweepFormatError(lineNo, `the sweep has more than ${MAX_SWEEP_POINTS} points; split it or export fewer points.`);
    }
    let point: SweepPoint;
    if (impedanceForm) {
      const loadOhm: Complex = { re: a, im: b };
      const reflection = reflectionAgainst(loadOhm, referenceOhm);
      if (reflection === null) {
        throw new SweepFormatError(lineNo, `the impedance equals −${referenceOhm} ohm, for which no reflection coefficient exists; check the sign of r_ohm.`);
      }
      point = { frequencyHz, loadOhm, reflection };
    } else {
      const reflection: Complex = { re: a, im: b };
      point = { frequencyHz, loadOhm: impedanceAgainst(reflection, referenceOhm), reflection };
    }
    points.push(point);
    previousHz = frequencyHz;
  }
  if (headerLine === 0) {
    throw new SweepFormatError(1, 'the file is empty; the first line must be a header such as "frequency_hz, r_ohm, x_ohm".');
  }
  if (points.length === 0) {
    throw new SweepFormatError(headerLine, 'the file has a header but no data rows.');
  }
  return { referenceOhm, points };
}

// Characters that make a spreadsheet treat a cell as a formula (or, for tab and CR, that some
// importers strip so that the next character becomes the first): OWASP "CSV Injection" guidance.
const FORMULA_START = /^[=+\-@\t\r]/;

/**
 * One CSV cell. Text starting with = + - @ tab or CR gets a leading apostrophe so a spreadsheet
 * shows it instead of evaluating it (OWASP CSV Injection guidance); text with the delimiter, a
 * quote or a line break is quoted per RFC 4180. Numbers are written as numbers in JavaScript's
 * shortest round-trip form (full double precision), even when negative; null is an empty cell.
 * @example csvCell('=1+1') // "'=1+1"
 */
export function csvCell(value: string | number | null, delimiter: ',' | ';' = ','): string {
  if (value === null) return '';
  if (typeof value === 'number') {
    if (!Number.isFinite(value)) throw new RangeError('CSV export got a non-finite number; unbounded figures must be null.');
    return Object.is(value, -0) ? '0' : String(value);
  }
  const text = FORMULA_START.test(value) ? `'${value}` : value;
  return text.includes(delimiter) || text.includes('"') || text.includes('\n') || text.includes('\r') ? `"${text.replace(/"/g, '""')}"` : text;
}

/**
 * Column names of the analysed-points export; parseSweepCsv reads such a file back through the
 * first three and ignores the rest.
 * @example ANALYSED_CSV_COLUMNS[0] // 'frequency_hz'
 */
export const ANALYSED_CSV_COLUMNS = [
  'frequency_hz',
  'r_ohm',
  'x_ohm',
  'reflection_re',
  'reflection_im',
  'reflection_magnitude',
  'reflection_angle_deg',
  'swr',
  'return_loss_db',
] as const;

/**
 * Analysed points as CSV for spreadsheets (RFC 4180, CRLF line ends): one header row of
 * ANALYSED_CSV_COLUMNS, optionally preceded by a `sweep` column carrying the sweep's name on
 * every row; unbounded figures and an open circuit's impedance are empty cells. Every text cell
 * goes through csvCell, so a sweep named "=HYPERLINK(…)" cannot run as a formula.
 * @example analysedPointsToCsv(analyseSweep(points, { referenceOhm: 50 }).points, { sweepName: 'Ridge Farm dipole' })
 */
export function analysedPointsToCsv(
  points: readonly AnalysedPoint[],
  options: { sweepName?: string; delimiter?: ',' | ';' } = {},
): string {
  return analysedCsvHeader(options) + analysedCsvRows(points, options);
}

/** The header row of analysedPointsToCsv, with its line end: the start of an export written in pieces. */
export function analysedCsvHeader(options: { sweepName?: string; delimiter?: ',' | ';' } = {}): string {
  const d = options.delimiter ?? ',';
  return `${(options.sweepName !== undefined ? ['sweep', ...ANALYSED_CSV_COLUMNS] : [...ANALYSED_CSV_COLUMNS]).join(d)}\r\n`;
}

/** The rows of analysedPointsToCsv for some of the points, each with its line end: the rest of an export written in pieces. */
export function analysedCsvRows(points: readonly AnalysedPoint[], options: { sweepName?: string; delimiter?: ',' | ';' } = {}): string {
  const d = options.delimiter ?? ',';
  const prefix = options.sweepName !== undefined ? `${csvCell(options.sweepName, d)}${d}` : '';
  let out = '';
  for (const p of points) {
    const z = p.loadOhm;
    const g = p.reflection;
    out +=
      prefix +
      [p.frequencyHz, z === null ? null : z.re, z === null ? null : z.im, g.re, g.im, g.magnitude, g.angleDeg, p.swr, p.returnLossDb].map((v) => csvCell(v, d)).join(d) +
      '\r\n';
  }
  return out;
}
