import type { z } from 'zod';

/**
 * Near-miss hints for unknown fields: `frequencyMHz` → "did you mean frequencyHz (hertz)?". A field
 * that differs from a known one only by its unit suffix (or lacks the suffix), or by a small slip of
 * the keyboard, names the known one. Pure: used by the server and by anything else that validates
 * with the same schemas.
 */

/** Unit suffixes of our field names, longest first, with the unit in words. */
const OUR_UNITS: readonly [suffix: string, words: string][] = [
  ['DbPer100ft', 'decibels per 100 feet'],
  ['DbPer100m', 'decibels per 100 metres'],
  ['OhmPerM', 'ohms per metre'],
  ['HPerM', 'henries per metre'],
  ['SPerM', 'siemens per metre'],
  ['FPerM', 'farads per metre'],
  ['RmsV', 'volts RMS'],
  ['Ohm', 'ohms'],
  ['Deg', 'degrees'],
  ['Hz', 'hertz'],
  ['Db', 'decibels'],
  ['Ft', 'feet'],
  ['W', 'watts'],
  ['V', 'volts'],
  ['A', 'amperes'],
  ['M', 'metres'],
];

/**
 * Unit words and symbols people write in field names (SI prefixes included), matched at the end of an
 * unknown field so that `frequencyMHz`, `lengthMeters` and `powerWatts` find their stems.
 */
const WRITTEN_UNITS = /(?:[kMG]?Hz|Hertz|Meters?|Metres?|Mtrs?|Km|Cm|Mm|Feet|Foot|Ft|Inch(?:es)?|[km]?W|Watts?|Kilowatts?|dBm?|Db|Decibels?|Ohms?|Volts?|[km]?V|Amps?|Amperes?|Deg|Degrees?|Rad|Radians?|M)$/;

function stemOfKnown(field: string): { stem: string; words?: string } {
  for (const [suffix, words] of OUR_UNITS) {
    if (field.length > suffix.length && field.endsWith(suffix)) return { stem: field.slice(0, -suffix.length), words };
  }
  return { stem: field };
}

function stemOfUnknown(field: string): string {
  const m = WRITTEN_UNITS.exec(field);
  return m && m.index > 0 ? field.slice(0, m.index) : field;
}

/** Longest unknown field that gets a hint: beyond this it is not a slip but something else entirely. */
const MAX_HINTED_LENGTH = 40;

/**
 * Optimal string alignment distance (Damerau–Levenshtein with adjacent swaps), case-insensitive,
 * computed in three reused rows; both strings are at most MAX_HINTED_LENGTH long here.
 */
function editDistance(a: string, b: string): number {
  const s = a.toLowerCase();
  const t = b.toLowerCase();
  let before = new Array<number>(t.length + 1).fill(0);
  let previous = Array.from({ length: t.length + 1 }, (_, j) => j);
  let current = new Array<number>(t.length + 1).fill(0);
  for (let i = 1; i <= s.length; i++) {
    current[0] = i;
    for (let j = 1; j <= t.length; j++) {
      const cost = s[i - 1] === t[j - 1] ? 0 : 1;
      let best = Math.min(previous[j]! + 1, current[j - 1]! + 1, previous[j - 1]! + cost);
      if (i > 1 && j > 1 && s[i - 1] === t[j - 2] && s[i - 2] === t[j - 1]) best = Math.min(best, before[j - 2]! + 1);
      current[j] = best;
    }
    [before, previous, current] = [previous, current, before];
  }
  return previous[t.length]!;
}

/** Words people write for the parts of a complex value. */
const ALIASES: Record<string, string> = { real: 're', resistance: 're', imag: 'im', imaginary: 'im', reactance: 'im' };

function describe(field: string): string {
  const { words } = stemOfKnown(field);
  return words ? `${field} (${words})` : field;
}

/** The known field an unknown one was probably meant to be, as a hint; undefined when none is close. */
export function nearMissHint(unknown: string, known: Iterable<string>): string | undefined {
  if (unknown.length > MAX_HINTED_LENGTH) return undefined;
  const candidates = [...known].filter((k) => k !== unknown);
  if (candidates.length === 0) return undefined;
  const lower = unknown.toLowerCase();
  const alias = ALIASES[lower];
  if (alias && candidates.includes(alias)) return `did you mean ${alias}?`;
  const stem = stemOfUnknown(unknown).toLowerCase();
  // The same quantity in another unit, or without one; a stem of four letters or more may be cut short
  // (`freqHz`), and a known field may be followed by more words at a camelCase step (`lengthMeters`).
  const sameStem = candidates.filter((k) => {
    const knownStem = stemOfKnown(k).stem.toLowerCase();
    if (knownStem === stem || k.toLowerCase() === stem || (stem.length >= 4 && knownStem.startsWith(stem))) return true;
    return k.length >= 3 && unknown.length > k.length && lower.startsWith(k.toLowerCase()) && /[A-Z0-9_]/.test(unknown[k.length]!);
  });
  if (sameStem.length > 0) {
    // `lengthMeters` means lengthM rather than lengthFt: prefer the unit written, when one is.
    const written = lower.slice(stem.length, stem.length + 3);
    const sameUnit = written.length === 3 ? sameStem.filter((k) => stemOfKnown(k).words?.startsWith(written)) : [];
    return `did you mean ${(sameUnit.length > 0 ? sameUnit : sameStem).map(describe).join(' or ')}?`;
  }
  // One slip per four characters, at most two: `velocityFactr`, `lossDbPer100M`, `imepdanceOhm`.
  const allowed = Math.min(2, Math.floor(unknown.length / 4));
  let best: { field: string; distance: number } | undefined;
  for (const k of candidates) {
    if (Math.abs(k.length - unknown.length) > allowed) continue;
    const distance = editDistance(unknown, k);
    if (distance <= allowed && (!best || distance < best.distance)) best = { field: k, distance };
  }
  return best ? `did you mean ${describe(best.field)}?` : undefined;
}

/** A zod schema's definition, as far as walking it needs. */
interface Def {
  type: string;
  innerType?: z.ZodType;
  in?: z.ZodType;
  getter?: () => z.ZodType;
  options?: z.ZodType[];
  left?: z.ZodType;
  right?: z.ZodType;
  element?: z.ZodType;
  valueType?: z.ZodType;
  shape?: Record<string, z.ZodType>;
}

const defOf = (schema: z.ZodType): Def => (schema as unknown as { _zod: { def: Def } })._zod.def;

/**
 * The field names an object at `path` inside `schema` accepts (every form of a union together), so an
 * unknown field there is compared with its real neighbours and not with every field of the API.
 */
export function knownFieldsAt(schema: z.ZodType, path: readonly PropertyKey[]): Set<string> {
  const found = new Set<string>();
  const walk = (s: z.ZodType | undefined, rest: readonly PropertyKey[], depth: number): void => {
    if (!s || depth > 32) return;
    const def = defOf(s);
    switch (def.type) {
      case 'optional':
      case 'nullable':
      case 'default':
      case 'prefault':
      case 'readonly':
      case 'catch':
      case 'nonoptional':
        walk(def.innerType, rest, depth + 1);
        return;
      case 'pipe':
        walk(def.in, rest, depth + 1);
        return;
      case 'lazy':
        walk(def.getter?.(), rest, depth + 1);
        return;
      case 'union':
        for (const option of def.options ?? []) walk(option, rest, depth + 1);
        return;
      case 'intersection':
        walk(def.left, rest, depth + 1);
        walk(def.right, rest, depth + 1);
        return;
      case 'array':
        if (rest.length > 0) walk(def.element, rest.slice(1), depth + 1);
        return;
      case 'record':
        if (rest.length > 0) walk(def.valueType, rest.slice(1), depth + 1);
        return;
      case 'object': {
        const shape = def.shape ?? {};
        if (rest.length === 0) for (const key of Object.keys(shape)) found.add(key);
        else walk(shape[String(rest[0])], rest.slice(1), depth + 1);
        return;
      }
    }
  };
  walk(schema, path, 0);
  return found;
}
