import { readFileSync } from 'node:fs';
import ComplexJs from 'complex.js';
import { describe, expect, it } from 'vitest';
import { MAX_SWEEP_POINTS, parseOptionLine, parseTouchstone, SweepFormatError, type Sweep } from '../../../shared/sweep/index.ts';
import { dipoleImpedance, dipoleTouchstone, DIPOLE_FREQUENCIES_HZ, type Format, type Parameter, type Unit } from './dipole.ts';

// Format rules: Touchstone File Format Specification, Version 2.0 (IBIS Open Forum, 2009), cited
// by section: "Option Line", "Network Data", "[Version]", "[Reference]" (headings from memory). Expected values: independent re-computation with complex.js.

const fixture = (name: string): string => readFileSync(new URL(`../../fixtures/sweeps/${name}`, import.meta.url), 'utf8');

function expectClose(actual: { re: number; im: number } | null, expected: ComplexJs, rel = 1e-9): void {
  expect(actual).not.toBeNull();
  const a = actual as { re: number; im: number };
  const err = Math.hypot(a.re - expected.re, a.im - expected.im);
  expect(err).toBeLessThanOrEqual(rel * expected.abs());
}

function expectDipole(sweep: Sweep, referenceOhm: number): void {
  expect(sweep.referenceOhm).toBe(referenceOhm);
  expect(sweep.points).toHaveLength(DIPOLE_FREQUENCIES_HZ.length);
  sweep.points.forEach((p, i) => {
    const f = DIPOLE_FREQUENCIES_HZ[i] as number;
    expect(Math.abs(p.frequencyHz - f)).toBeLessThanOrEqual(1e-9 * f);
    const z = dipoleImpedance(f);
    expectClose(p.loadOhm, z);
    expectClose(p.reflection, z.sub(referenceOhm).div(z.add(referenceOhm)));
  });
}

function formatError(run: () => unknown): SweepFormatError {
  try {
    run();
  } catch (e) {
    expect(e).toBeInstanceOf(SweepFormatError);
    return e as SweepFormatError;
  }
  throw new Error('expected a SweepFormatError');
}

const UNITS: Unit[] = ['Hz', 'kHz', 'MHz', 'GHz'];
const PARAMETERS: Parameter[] = ['S', 'Z', 'Y'];
const FORMATS: Format[] = ['MA', 'DB', 'RI'];
const FORMS = UNITS.flatMap((unit) =>
  PARAMETERS.flatMap((parameter) =>
    FORMATS.flatMap((format) => [50, 75].flatMap((referenceOhm) => ([1, 2] as const).map((version) => ({ unit, parameter, format, referenceOhm, version })))),
  ),
);

describe('every option-line form of the same sweep reads to the same points', () => {
  it('covers all 144 combinations of unit, parameter, format, reference and version', () => {
    expect(FORMS).toHaveLength(144);
  });

  it.each(FORMS)('reads the dipole written as # $unit $parameter $format R $referenceOhm, version $version', (form) => {
    expectDipole(parseTouchstone(dipoleTouchstone(form)), form.referenceOhm);
  });

  it.each([
    '# R 50 RI S MHz',
    '# ri mhz r 50 s',
    '#MHz\tS\tRI\tR\t50',
    '  #   mhz   S ri   R   50.0  ',
  ])('accepts the option-line fields in any order, case and spacing: "%s"', (optionLine) => {
    expectDipole(parseTouchstone(dipoleTouchstone({ unit: 'MHz', parameter: 'S', format: 'RI', referenceOhm: 50, version: 1, optionLine })), 50);
  });

  it('applies the defaults GHz, S, MA and R 50 when the option line is a bare "#"', () => {
    expectDipole(parseTouchstone(dipoleTouchstone({ unit: 'GHz', parameter: 'S', format: 'MA', referenceOhm: 50, version: 1, optionLine: '#' })), 50);
  });

  it('fills only the missing fields with defaults', () => {
    expect(parseOptionLine('# MHz', 1)).toEqual({ frequencyUnit: 'MHz', parameter: 'S', format: 'MA', referenceOhm: 50 });
    expect(parseOptionLine('# Z R 75', 1)).toEqual({ frequencyUnit: 'GHz', parameter: 'Z', format: 'MA', referenceOhm: 75 });
  });
});

describe('Version 1 and Version 2 treat Z and Y data differently', () => {
  it('reads Version 1 Z data as normalized to R, so Z = 1 on an R 50 file is a 50-ohm load', () => {
    const sweep = parseTouchstone('# MHz Z RI R 50\n7.1 1 0\n');
    expect(sweep.points[0]?.loadOhm).toEqual({ re: 50, im: 0 });
  });

  it('reads Version 2 Z data in ohms, so Z = 1 is a 1-ohm load (Touchstone 2.0 § [Network Data], from memory; pinned here)', () => {
    const sweep = parseTouchstone('[Version] 2.0\n# MHz Z RI R 50\n[Number of Ports] 1\n[Network Data]\n7.1 1 0\n[End]\n');
    expect(sweep.points[0]?.loadOhm).toEqual({ re: 1, im: 0 });
  });

  it('reads Version 1 Y data as normalized to 1/R and Version 2 Y data in siemens', () => {
    const v1 = parseTouchstone('# MHz Y RI R 50\n7.1 0.5 0\n');
    expect(v1.points[0]?.loadOhm).toEqual({ re: 100, im: 0 });
    const v2 = parseTouchstone('[Version] 2.0\n# MHz Y RI R 50\n[Number of Ports] 1\n[Network Data]\n7.1 0.01 0\n[End]\n');
    expect(v2.points[0]?.loadOhm?.re).toBeCloseTo(100, 12);
  });

  it('lets [Reference] in a Version 2 file override the option line R, also on the following line', () => {
    const sameLine = parseTouchstone('[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Reference] 75\n[Network Data]\n7.1 0.2 0\n[End]\n');
    expect(sameLine.referenceOhm).toBe(75);
    // Hand calculation: Z = 75·(1 + 0.2)/(1 − 0.2) = 112.5 ohm.
    expect(sameLine.points[0]?.loadOhm?.re).toBeCloseTo(112.5, 12);
    const nextLine = parseTouchstone('[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Reference]\n! port 1\n75\n[Network Data]\n7.1 0.2 0\n[End]\n');
    expect(nextLine.referenceOhm).toBe(75);
  });
});

describe('the reader tolerates what the format allows', () => {
  it('reads a Version 1 fixture with CR/LF line ends, tabs, comments everywhere and mixed case', () => {
    const sweep = parseTouchstone(fixture('millbrook-vertical-v1.s1p'));
    expect(sweep.referenceOhm).toBe(50);
    expect(sweep.points.map((p) => p.frequencyHz)).toEqual([14.0e6, 14.1e6, 14.2e6, 14.3e6]);
    // Hand calculation: S = 0.2∠0° against 50 ohm is Z = 50·1.2/0.8 = 75 ohm.
    expect(sweep.points[2]?.loadOhm?.re).toBeCloseTo(75, 12);
    expect(sweep.points[2]?.loadOhm?.im).toBe(0);
  });

  it('reads a Version 2 fixture with an information block and ignores text after [End]', () => {
    const sweep = parseTouchstone(fixture('millbrook-vertical-v2.s1p'));
    expect(sweep.referenceOhm).toBe(50);
    expect(sweep.points).toHaveLength(3);
    expect(sweep.points[0]?.loadOhm).toEqual({ re: 50, im: 25 });
  });

  it('uses only the first option line and ignores later ones', () => {
    const sweep = parseTouchstone('# MHz S RI R 50\n7.0 0.2 0\n# GHz Z MA R 75\n7.1 0.2 0\n');
    expect(sweep.points.map((p) => p.frequencyHz)).toEqual([7.0e6, 7.1e6]);
    expect(sweep.points[1]?.reflection).toEqual({ re: 0.2, im: 0 });
  });

  it('represents an ideal open circuit as loadOhm null with Γ = 1, from S, Y and Z data', () => {
    expect(parseTouchstone('# MHz S MA R 50\n7.1 1 0\n').points[0]).toEqual({ frequencyHz: 7.1e6, loadOhm: null, reflection: { re: 1, im: 0 } });
    expect(parseTouchstone('# MHz S DB R 50\n7.1 0 0\n').points[0]?.loadOhm).toBeNull();
    expect(parseTouchstone('# MHz Y RI R 50\n7.1 0 0\n').points[0]).toEqual({ frequencyHz: 7.1e6, loadOhm: null, reflection: { re: 1, im: 0 } });
  });

  it('reads a short circuit as 0 ohm with Γ = −1', () => {
    const p = parseTouchstone('# MHz S MA R 50\n7.1 1 180\n').points[0];
    expect(p?.reflection).toEqual({ re: -1, im: 0 });
    expect(p?.loadOhm).toEqual({ re: 0, im: 0 });
  });

  it('keeps a pure reactance pure when the angle is a whole quadrant', () => {
    // Hand calculation: Γ = j against 50 ohm is Z = 50·(1 + j)/(1 − j) = j50 ohm.
    const p = parseTouchstone('# MHz S MA R 50\n7.1 1 90\n').points[0];
    expect(p?.reflection).toEqual({ re: 0, im: 1 });
    expect(p?.loadOhm?.re).toBe(0);
    expect(p?.loadOhm?.im).toBeCloseTo(50, 12);
  });

  it('accepts exactly MAX_SWEEP_POINTS points', () => {
    const lines = ['# Hz S RI R 50'];
    for (let i = 1; i <= MAX_SWEEP_POINTS; i++) lines.push(`${i} 0.1 0`);
    expect(parseTouchstone(lines.join('\n')).points).toHaveLength(MAX_SWEEP_POINTS);
  });
});

describe('malformed files are refused with the line and the reason', () => {
  const cases: { name: string; text: string; line: number; reason: RegExp }[] = [
    { name: 'an empty file', text: '', line: 1, reason: /empty/ },
    { name: 'a file of comments only', text: '! nothing here\n!\n', line: 1, reason: /empty|only comments/ },
    { name: 'non-numeric data', text: '# MHz S RI R 50\n7.0 0.1 0\n7.1 0.1x 0\n', line: 3, reason: /"0\.1x" is not a number/ },
    { name: 'a missing value', text: '# MHz S RI R 50\n7.0 0.1 0\n7.1 0.1\n', line: 3, reason: /missing value/ },
    { name: 'a decreasing frequency', text: '# MHz S RI R 50\n7.0 0.1 0\n7.2 0.1 0\n7.1 0.1 0\n', line: 4, reason: /strictly increase/ },
    { name: 'a repeated frequency', text: '# MHz S RI R 50\n7.0 0.1 0\n7.0 0.1 0\n', line: 3, reason: /strictly increase/ },
    {
      name: 'two-port data lines',
      text: '# MHz S RI R 50\n7.0 0.1 0 0.9 0 0.9 0 0.1 0\n',
      line: 2,
      reason: /two-port/,
    },
    {
      name: 'a two-port Version 2 file',
      text: '[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 2\n[Network Data]\n',
      line: 3,
      reason: /2-port file; only one-port/,
    },
    { name: 'H parameters', text: '# MHz H RI R 50\n7.0 0.1 0\n', line: 1, reason: /two-port/ },
    { name: 'G parameters', text: '! note\n# MHz G RI R 50\n7.0 0.1 0\n', line: 2, reason: /two-port/ },
    {
      name: 'a truncated Version 2 file',
      text: '[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 5\n[Network Data]\n7.0 0.1 0\n7.1 0.1 0\n',
      line: 7,
      reason: /without \[End\].*2 of 5.*cut short/,
    },
    {
      name: 'a Version 2 file whose count disagrees with its data',
      text: '[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 3\n[Network Data]\n7.0 0.1 0\n7.1 0.1 0\n[End]\n',
      line: 8,
      reason: /says 3, but 2/,
    },
    { name: 'a truncated Version 1 data line', text: '# MHz S RI R 50\n7.0 0.1 0\n7.1 0.', line: 3, reason: /missing value/ },
    { name: 'an unknown option-line field', text: '# MHz S XY R 50\n7.0 0.1 0\n', line: 1, reason: /bad option line: "XY"/ },
    { name: 'an option line with R but no number', text: '# MHz S RI R\n7.0 0.1 0\n', line: 1, reason: /after "R"/ },
    { name: 'an option line with a zero reference', text: '# MHz S RI R 0\n', line: 1, reason: /greater than 0/ },
    { name: 'an option line giving the unit twice', text: '# MHz GHz S RI\n', line: 1, reason: /frequency unit twice/ },
    { name: 'data before the option line', text: '7.0 0.1 0\n# MHz S RI R 50\n', line: 1, reason: /before the option line/ },
    { name: 'binary garbage', text: '\u0000\u0001PK\u0003\u0004\u00ff\u00fe', line: 1, reason: /binary/ },
    { name: 'non-ASCII bytes in data', text: '# MHz S RI R 50\n7.0 0.1 0\n7.1 \ufffd\ufffd 0\n', line: 3, reason: /non-ASCII/ },
    { name: 'a Version 2 keyword in a Version 1 file', text: '# MHz S RI R 50\n[Number of Ports] 1\n', line: 2, reason: /Version 2 keyword/ },
    { name: 'an unsupported version', text: '[Version] 3.0\n', line: 1, reason: /not supported/ },
    { name: 'Version 2 data before [Network Data]', text: '[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n7.0 0.1 0\n', line: 4, reason: /before \[Network Data\]/ },
    { name: 'noise data', text: '[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Network Data]\n7.0 0.1 0\n[Noise Data]\n', line: 6, reason: /two-port/ },
    { name: 'an option line only', text: '# MHz S RI R 50\n! no data\n', line: 1, reason: /no data lines/ },
    { name: 'an infinite value', text: '# MHz S RI R 50\n7.0 1e999 0\n', line: 2, reason: /finite/ },
    { name: 'a hexadecimal number', text: '# MHz S RI R 50\n0x10 0.1 0\n', line: 2, reason: /not a number/ },
  ];

  it.each(cases)('refuses $name at line $line', ({ text, line, reason }) => {
    const e = formatError(() => parseTouchstone(text));
    expect(e.line).toBe(line);
    expect(e.reason).toMatch(reason);
    expect(e.message).toBe(`Line ${line}: ${e.reason}`);
  });

  it('refuses more than MAX_SWEEP_POINTS points, naming the first line over the cap', () => {
    const lines = ['# Hz S RI R 50'];
    for (let i = 1; i <= MAX_SWEEP_POINTS + 1; i++) lines.push(`${i} 0.1 0`);
    const e = formatError(() => parseTouchstone(lines.join('\n')));
    expect(e.line).toBe(MAX_SWEEP_POINTS + 2);
    expect(e.reason).toMatch(/more than 100000 points/);
  });

  it('refuses a declared frequency count above MAX_SWEEP_POINTS before reading any data', () => {
    const e = formatError(() => parseTouchstone('[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 200000\n'));
    expect(e.line).toBe(4);
    expect(e.reason).toMatch(/at most 100000/);
  });
});
