import type { Complex } from '../rf/complex.ts';
import { SweepFormatError } from './errors.ts';
import { impedanceAgainst, MAX_SWEEP_POINTS, reflectionAgainst, type Sweep, type SweepPoint } from './points.ts';

// Rules from the published open specification: Touchstone File Format Specification, Version 2.0
// (IBIS Open Forum, ratified 2009; Version 2.1 keeps these rules), which also describes Version 1
// files. Comments below cite it by its section headings; the headings, and the rule marked so, are
// from memory: "General syntax rules" (case-insensitive, ASCII, `!` comments), "Option Line"
// (`# <unit> <parameter> <format> R <n>`, defaults GHz S MA R 50, only the first one counts; Version 1
// Z and Y data normalized to R), "Network Data" (frequency, then the value pairs), and the keywords
// "[Version]", "[Number of Ports]", "[Number of Frequencies]", "[Reference]", "[Network Data]", "[End]".

/** The settings of a Touchstone option line after defaults are applied (§ Option Line). */
export interface TouchstoneOptions {
  frequencyUnit: 'Hz' | 'kHz' | 'MHz' | 'GHz';
  parameter: 'S' | 'Y' | 'Z';
  format: 'MA' | 'DB' | 'RI';
  referenceOhm: number;
}

const UNITS: Record<string, { name: TouchstoneOptions['frequencyUnit']; hz: number }> = {
  hz: { name: 'Hz', hz: 1 },
  khz: { name: 'kHz', hz: 1e3 },
  mhz: { name: 'MHz', hz: 1e6 },
  ghz: { name: 'GHz', hz: 1e9 },
};

// Decimal numbers as Touchstone writes them; Number() alone would also accept "0x10", "" and "Infinity".
const NUMBER = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;
// Control characters other than tab, LF and CR never occur in a text file; they mean binary content.
const CONTROL = /[\x00-\x08\x0B\x0C\x0E-\x1F\x7F]/;
const NON_ASCII = /[^\x00-\x7F]/;
const WHITESPACE = /[ \t]+/;
const KEYWORD = /^\[([^\]]*)\]\s*(.*)$/;

function parseNumber(token: string, lineNo: number, what: string): number {
  if (!NUMBER.test(token)) {
    throw new SweepFormatError(lineNo, `"${token}" is not a number (${what}); write decimal numbers such as 7.1 or 1.5e-3.`);
  }
  const v = Number(token);
  if (!Number.isFinite(v)) throw new SweepFormatError(lineNo, `"${token}" is too large to be a finite number (${what}).`);
  return v;
}

/**
 * Reads a Touchstone option line, `# <unit> <parameter> <format> R <n>`, fields in any order, any
 * missing (defaults GHz, S, MA, R 50: § Option Line). H and G parameters are refused: they exist only for
 * two-ports.
 * @example parseOptionLine('# MHz S RI R 50', 3) // { frequencyUnit: 'MHz', parameter: 'S', format: 'RI', referenceOhm: 50 }
 */
export function parseOptionLine(content: string, lineNo: number): TouchstoneOptions {
  if (content[0] !== '#') throw new SweepFormatError(lineNo, 'an option line starts with "#".');
  const tokens = content.slice(1).trim().split(/\s+/).filter((t) => t !== '');
  let unit: TouchstoneOptions['frequencyUnit'] | undefined;
  let parameter: TouchstoneOptions['parameter'] | undefined;
  let format: TouchstoneOptions['format'] | undefined;
  let referenceOhm: number | undefined;
  const once = (seen: unknown, field: string): void => {
    if (seen !== undefined) throw new SweepFormatError(lineNo, `the option line gives the ${field} twice; keep one.`);
  };
  for (let i = 0; i < tokens.length; i++) {
    const token = tokens[i] as string;
    const t = token.toLowerCase();
    const u = UNITS[t];
    if (u) {
      once(unit, 'frequency unit');
      unit = u.name;
    } else if (t === 's' || t === 'y' || t === 'z') {
      once(parameter, 'parameter');
      parameter = t.toUpperCase() as TouchstoneOptions['parameter'];
    } else if (t === 'h' || t === 'g') {
      throw new SweepFormatError(lineNo, `${token.toUpperCase()} parameters describe two-port networks; a one-port file holds S, Z or Y data.`);
    } else if (t === 'ma' || t === 'db' || t === 'ri') {
      once(format, 'data format');
      format = t.toUpperCase() as TouchstoneOptions['format'];
    } else if (t === 'r') {
      once(referenceOhm, 'reference resistance');
      const next = tokens[i + 1];
      if (next === undefined) throw new SweepFormatError(lineNo, 'the option line ends after "R"; give the reference resistance in ohms, for example "R 50".');
      const r = parseNumber(next, lineNo, 'reference resistance after R');
      if (r <= 0) throw new SweepFormatError(lineNo, `the reference resistance R ${next} must be greater than 0 ohm (for example R 50).`);
      referenceOhm = r;
      i++;
    } else {
      throw new SweepFormatError(
        lineNo,
        `bad option line: "${token}" is not a frequency unit (Hz, kHz, MHz, GHz), a parameter (S, Y, Z), a format (MA, DB, RI) or "R <ohms>".`,
      );
    }
  }
  return { frequencyUnit: unit ?? 'GHz', parameter: parameter ?? 'S', format: format ?? 'MA', referenceOhm: referenceOhm ?? 50 };
}

/** Parses the value pair of a data line into a complex number according to the format (§ Option Line). */
function valueFromPair(a: number, b: number, format: TouchstoneOptions['format']): Complex {
  if (format === 'RI') return { re: a, im: b };
  const magnitude = format === 'DB' ? 10 ** (a / 20) : a;
  const rad = (b * Math.PI) / 180;
  // cos(90°) computed in radians is 6e-17, not 0; exact quadrants keep a pure reactance pure.
  if (b % 90 === 0) {
    const q = (((b / 90) % 4) + 4) % 4;
    return q === 0 ? { re: magnitude, im: 0 } : q === 1 ? { re: 0, im: magnitude } : q === 2 ? { re: -magnitude, im: 0 } : { re: 0, im: -magnitude };
  }
  return { re: magnitude * Math.cos(rad), im: magnitude * Math.sin(rad) };
}

/**
 * Turns one S, Z or Y value into a sweep point against R. Version 1 Z and Y data are normalized
 * to R (§ Option Line). Version 2 Z and Y data are taken in ohms and siemens, NOT normalized (§ [Network Data]; this
 * reading of the specification is from memory), so if the specification's text says otherwise this is
 * the one place to change, and the tests pin both behaviours.
 */
function pointFromValue(
  frequencyHz: number,
  x: Complex,
  options: TouchstoneOptions,
  referenceOhm: number,
  version: 1 | 2,
  lineNo: number,
): SweepPoint {
  const r = referenceOhm;
  if (options.parameter === 'S') {
    return { frequencyHz, loadOhm: impedanceAgainst(x, r), reflection: x };
  }
  if (options.parameter === 'Z') {
    const z = version === 1 ? { re: x.re * r, im: x.im * r } : x;
    const reflection = reflectionAgainst(z, r);
    if (reflection === null || !Number.isFinite(z.re) || !Number.isFinite(z.im)) {
      throw new SweepFormatError(lineNo, `the impedance here equals minus the reference resistance (−${r} ohm), for which no reflection coefficient exists; check the sign of the data.`);
    }
    return { frequencyHz, loadOhm: z, reflection };
  }
  // Y: Γ = (1 − Y·R)/(1 + Y·R) keeps an admittance of 0 (an ideal open) exact at Γ = 1.
  const yn = version === 1 ? x : { re: x.re * r, im: x.im * r };
  const dr = 1 + yn.re;
  const di = yn.im;
  if (dr === 0 && di === 0) {
    throw new SweepFormatError(lineNo, `the admittance here equals minus 1/R (R = ${r} ohm), for which no reflection coefficient exists; check the sign of the data.`);
  }
  // (1 − y)/(1 + y) = −(y − 1)/(y + 1): the same overflow-safe division as for impedances.
  const g = reflectionAgainst(yn, 1) as Complex;
  // 0 − x rather than −x: a zero stays +0, so a real admittance gives a plainly real Γ.
  const reflection = { re: 0 - g.re, im: 0 - g.im };
  let loadOhm: Complex | null = null;
  if (yn.re !== 0 || yn.im !== 0) {
    const m = yn.re * yn.re + yn.im * yn.im;
    loadOhm = { re: (yn.re / m) * r, im: ((0 - yn.im) / m) * r };
    if (!Number.isFinite(loadOhm.re) || !Number.isFinite(loadOhm.im)) loadOhm = null;
  }
  return { frequencyHz, loadOhm, reflection };
}

/**
 * Reads a one-port Touchstone file (Version 1 or 2.0) into a sweep: frequencies in Hz, the load
 * impedance and Γ against the file's reference resistance (`R n`, or `[Reference]` in Version 2).
 * Rules: Touchstone File Format Specification 2.0 (IBIS Open Forum) — case-insensitive, `!`
 * comments anywhere, LF or CR/LF, only the first option line counts, frequencies strictly
 * increasing. Multi-port files, H/G parameters, noise data, non-text bytes and more than
 * MAX_SWEEP_POINTS points are refused. Every refusal is a SweepFormatError naming the line.
 * An ideal open circuit (S = 1, or Y = 0) has `loadOhm: null`.
 * @example parseTouchstone('# MHz S RI R 50\n7.1 0.2 0\n').points[0] // { frequencyHz: 7.1e6, loadOhm: { re: 75, im: 0 }, reflection: { re: 0.2, im: 0 } }
 */
export function parseTouchstone(text: string): Sweep {
  if (typeof text !== 'string') throw new SweepFormatError(1, 'the upload is not text; send the .s1p file as text.');
  // A byte-order mark is not ASCII, but editors add it silently; it carries no meaning.
  const lines = (text.charCodeAt(0) === 0xfeff ? text.slice(1) : text).split(/\r\n|\n|\r/);
  let version: 1 | 2 | undefined;
  let options: TouchstoneOptions | undefined;
  let unitHz = 1e9;
  let referenceOhm = 50;
  // Version 2 state.
  let ports: number | undefined;
  let declaredFrequencies: number | undefined;
  let referenceFromKeyword: number | undefined;
  let awaitingReferenceSince = 0;
  let inInformation = false;
  let inNetworkData = false;
  let ended = false;
  let lastContentLine = 0;

  const points: SweepPoint[] = [];
  let previousHz = -Infinity;

  for (let i = 0; i < lines.length; i++) {
    const lineNo = i + 1;
    const raw = lines[i] as string;
    if (CONTROL.test(raw)) {
      throw new SweepFormatError(lineNo, 'the line holds binary (non-text) bytes; this is not a Touchstone text file. Export the sweep from the analyzer as .s1p text.');
    }
    const bang = raw.indexOf('!');
    const content = (bang === -1 ? raw : raw.slice(0, bang)).trim();
    if (content === '') continue;
    // Comments may carry an operator's note in any script; the data itself must be ASCII (§ General syntax rules).
    if (NON_ASCII.test(content)) {
      throw new SweepFormatError(lineNo, 'the line holds non-ASCII characters outside a comment; Touchstone data is plain ASCII. Is this a binary file or a different format?');
    }
    if (ended) continue;
    lastContentLine = lineNo;

    const keyword = content[0] === '[' ? KEYWORD.exec(content) : null;
    if (content[0] === '[' && keyword === null) {
      throw new SweepFormatError(lineNo, 'a keyword line needs a closing "]", for example "[Number of Ports] 1".');
    }
    const name = keyword ? (keyword[1] as string).trim().toLowerCase().replace(/\s+/g, ' ') : '';
    const args = keyword ? (keyword[2] as string).trim() : '';

    if (version === undefined) {
      if (keyword && name === 'version') {
        if (args !== '2.0') {
          throw new SweepFormatError(lineNo, `[Version] ${args} is not supported; Version 1 files (no [Version] line) and [Version] 2.0 files are read.`);
        }
        version = 2;
        continue;
      }
      if (keyword) {
        throw new SweepFormatError(lineNo, `a Version 2 file must start with "[Version] 2.0", but the first keyword is [${keyword[1]}].`);
      }
      version = 1;
    }

    if (inInformation) {
      if (name === 'end information') inInformation = false;
      continue;
    }

    if (awaitingReferenceSince !== 0) {
      if (keyword || content[0] === '#') {
        throw new SweepFormatError(awaitingReferenceSince, '[Reference] has no value; give the port reference resistance in ohms, for example "[Reference] 50".');
      }
      referenceFromKeyword = referenceValue(content, lineNo);
      awaitingReferenceSince = 0;
      continue;
    }

    if (content[0] === '#') {
      // Only the first option line counts (§ Option Line).
      if (options === undefined) {
        options = parseOptionLine(content, lineNo);
        unitHz = (UNITS[options.frequencyUnit.toLowerCase()] as { hz: number }).hz;
        referenceOhm = options.referenceOhm;
      }
      continue;
    }

    if (keyword) {
      if (version === 1) {
        throw new SweepFormatError(lineNo, `[${keyword[1]}] is a Version 2 keyword, but the file does not start with "[Version] 2.0"; add that line first or remove the keyword.`);
      }
      switch (name) {
        case 'version':
          throw new SweepFormatError(lineNo, '[Version] appears twice; keep only the first line of the file.');
        case 'number of ports': {
          if (args === '') throw new SweepFormatError(lineNo, '[Number of Ports] needs a value; a one-port file has "[Number of Ports] 1".');
          const n = parseNumber(args.split(WHITESPACE)[0] as string, lineNo, 'number of ports');
          if (n !== 1) {
            throw new SweepFormatError(lineNo, `this is a ${args}-port file; only one-port (.s1p) sweeps are read. Export the reflection (S11) of one port.`);
          }
          ports = 1;
          break;
        }
        case 'two-port data order':
          // Meaningful only for two-ports; [Number of Ports] decides, so a stray one is harmless.
          break;
        case 'number of frequencies': {
          if (args === '') throw new SweepFormatError(lineNo, '[Number of Frequencies] needs a value, the count of data lines.');
          const n = parseNumber(args.split(WHITESPACE)[0] as string, lineNo, 'number of frequencies');
          if (!Number.isInteger(n) || n < 1) throw new SweepFormatError(lineNo, '[Number of Frequencies] must be a whole number of 1 or more.');
          if (n > MAX_SWEEP_POINTS) {
            throw new SweepFormatError(lineNo, `the file declares ${n} frequencies; at most ${MAX_SWEEP_POINTS} points are accepted per sweep. Split the sweep or export fewer points.`);
          }
          declaredFrequencies = n;
          break;
        }
        case 'reference':
          if (args === '') awaitingReferenceSince = lineNo;
          else referenceFromKeyword = referenceValue(args, lineNo);
          break;
        case 'matrix format': {
          const f = args.toLowerCase();
          if (f !== 'full' && f !== 'lower' && f !== 'upper') {
            throw new SweepFormatError(lineNo, '[Matrix Format] must be Full, Lower or Upper.');
          }
          break;
        }
        case 'begin information':
          inInformation = true;
          break;
        case 'network data':
          if (ports === undefined) throw new SweepFormatError(lineNo, '[Number of Ports] 1 must come before [Network Data].');
          if (options === undefined) throw new SweepFormatError(lineNo, 'the option line (for example "# MHz S RI R 50") must come before [Network Data].');
          if (referenceFromKeyword !== undefined) referenceOhm = referenceFromKeyword;
          inNetworkData = true;
          break;
        case 'end':
          if (!inNetworkData) throw new SweepFormatError(lineNo, '[End] comes before any [Network Data]; the file holds no sweep.');
          if (declaredFrequencies !== undefined && points.length !== declaredFrequencies) {
            throw new SweepFormatError(lineNo, `[Number of Frequencies] says ${declaredFrequencies}, but ${points.length} data lines were found; the file may be cut short or the count wrong.`);
          }
          ended = true;
          break;
        case 'noise data':
        case 'number of noise frequencies':
          throw new SweepFormatError(lineNo, 'noise data belongs to two-port files; only one-port (.s1p) sweeps are read.');
        case 'mixed-mode order':
          throw new SweepFormatError(lineNo, 'mixed-mode data needs four or more ports; only one-port (.s1p) sweeps are read.');
        case 'end information':
          throw new SweepFormatError(lineNo, '[End Information] without a [Begin Information] before it.');
        default:
          throw new SweepFormatError(lineNo, `[${keyword[1]}] is not a Touchstone 2.0 keyword for a one-port file.`);
      }
      continue;
    }

    // Anything else is a data line: frequency, then one value pair (§ Network Data).
    if (options === undefined) {
      throw new SweepFormatError(lineNo, 'data comes before the option line; add one such as "# MHz S RI R 50" above the data.');
    }
    if (version === 2 && !inNetworkData) {
      throw new SweepFormatError(lineNo, 'data comes before [Network Data]; put the frequency lines after that keyword.');
    }
    const tokens = content.split(WHITESPACE);
    const f = parseNumber(tokens[0] as string, lineNo, 'frequency');
    const a = tokens.length > 1 ? parseNumber(tokens[1] as string, lineNo, 'first value of the pair') : NaN;
    const b = tokens.length > 2 ? parseNumber(tokens[2] as string, lineNo, 'second value of the pair') : NaN;
    if (tokens.length < 3) {
      throw new SweepFormatError(lineNo, `missing value: a one-port data line holds 3 numbers (frequency, then a ${options.format} pair) but this one has ${tokens.length}; the file may be cut short.`);
    }
    if (tokens.length > 3) {
      for (let k = 3; k < tokens.length; k++) parseNumber(tokens[k] as string, lineNo, 'value');
      const hint = tokens.length === 9 ? ' Nine numbers per line is two-port (.s2p) data.' : '';
      throw new SweepFormatError(lineNo, `a one-port data line holds 3 numbers (frequency, then one value pair) but this one has ${tokens.length}; only one-port (.s1p) files are read.${hint}`);
    }
    const frequencyHz = f * unitHz;
    if (!Number.isFinite(frequencyHz) || frequencyHz < 0) {
      throw new SweepFormatError(lineNo, `the frequency ${tokens[0]} ${options.frequencyUnit} is not a frequency of 0 or more.`);
    }
    if (frequencyHz <= previousHz) {
      throw new SweepFormatError(lineNo, `the frequency ${tokens[0]} ${options.frequencyUnit} is not above the one before it; frequencies must strictly increase.`);
    }
    if (points.length === MAX_SWEEP_POINTS) {
      throw new SweepFormatError(lineNo, `the sweep has more than ${MAX_SWEEP_POINTS} points; split it or export fewer points.`);
    }
    if (declaredFrequencies !== undefined && points.length === declaredFrequencies) {
      throw new SweepFormatError(lineNo, `[Number of Frequencies] says ${declaredFrequencies}, but there are more data lines; correct the count.`);
    }
    const x = valueFromPair(a, b, options.format);
    if (!Number.isFinite(x.re) || !Number.isFinite(x.im)) {
      throw new SweepFormatError(lineNo, `the value pair ${tokens[1]} ${tokens[2]} is too large to represent.`);
    }
    points.push(pointFromValue(frequencyHz, x, options, referenceOhm, version, lineNo));
    previousHz = frequencyHz;
  }

  const endLine = Math.max(1, lastContentLine);
  if (version === undefined) {
    throw new SweepFormatError(1, 'the file is empty (or holds only comments); upload a .s1p file with an option line and data.');
  }
  if (awaitingReferenceSince !== 0) {
    throw new SweepFormatError(awaitingReferenceSince, '[Reference] has no value; give the port reference resistance in ohms, for example "[Reference] 50".');
  }
  if (version === 2 && !ended) {
    const count = declaredFrequencies === undefined ? `${points.length} frequencies read` : `${points.length} of ${declaredFrequencies} frequencies read`;
    throw new SweepFormatError(endLine, `the file ends without [End] (${count}); it is probably cut short. Upload the complete file.`);
  }
  if (points.length === 0) {
    throw new SweepFormatError(endLine, 'the file holds no data lines; each line needs a frequency and a value pair.');
  }
  return { referenceOhm, points };
}

function referenceValue(text: string, lineNo: number): number {
  const tokens = text.split(WHITESPACE);
  if (tokens.length > 1) {
    throw new SweepFormatError(lineNo, `[Reference] gives ${tokens.length} values; a one-port file has one reference resistance.`);
  }
  const r = parseNumber(tokens[0] as string, lineNo, 'reference resistance');
  if (r <= 0) throw new SweepFormatError(lineNo, `the reference resistance ${tokens[0]} must be greater than 0 ohm.`);
  return r;
}
