import { describe, expect, it } from 'vitest';
import { analyseSweep, analysedPointsToCsv, csvCell, parseSweepCsv, SweepFormatError } from '../../../shared/sweep/index.ts';
import { dipoleImpedance, DIPOLE_FREQUENCIES_HZ } from './dipole.ts';

function formatError(run: () => unknown): SweepFormatError {
  try {
    run();
  } catch (e) {
    expect(e).toBeInstanceOf(SweepFormatError);
    return e as SweepFormatError;
  }
  throw new Error('expected a SweepFormatError');
}

describe('reading CSV sweeps', () => {
  it('reads the impedance form and derives Γ against the reference (hand calculation: 75 ohm on 50 is Γ = 0.2)', () => {
    const sweep = parseSweepCsv('frequency_hz,r_ohm,x_ohm\n7100000,75,0\n7200000,50,-25\n');
    expect(sweep.referenceOhm).toBe(50);
    expect(sweep.points[0]).toEqual({ frequencyHz: 7.1e6, loadOhm: { re: 75, im: 0 }, reflection: { re: 0.2, im: 0 } });
    // Hand calculation: (50 − j25 − 50)/(100 − j25) = −j25/(100 − j25) = (0.0588, −0.2353).
    expect(sweep.points[1]?.reflection.re).toBeCloseTo(625 / 10625, 15);
    expect(sweep.points[1]?.reflection.im).toBeCloseTo(-2500 / 10625, 15);
  });

  it('reads the reflection form against the given reference (hand calculation: Γ = 0.2 on 75 ohm is 112.5 ohm)', () => {
    const sweep = parseSweepCsv('frequency_hz,s11_re,s11_im\n7100000,0.2,0\n', { referenceOhm: 75 });
    expect(sweep.referenceOhm).toBe(75);
    expect(sweep.points[0]?.loadOhm?.re).toBeCloseTo(112.5, 12);
  });

  it('tolerates case, whitespace, quotes, column order, semicolons, CR/LF, comments, blank lines and extra columns', () => {
    const text = '\ufeff# Larkspur Hill 40 m dipole\r\n\r\n  " S11_IM " ; Frequency_Hz ;s11_re ; note\r\n# mid-file comment\r\n0 ; 7100000 ; 0.2 ; first\r\n\r\n-0.1;7200000;0.1;\r\n';
    const sweep = parseSweepCsv(text);
    expect(sweep.points.map((p) => p.frequencyHz)).toEqual([7.1e6, 7.2e6]);
    expect(sweep.points[1]?.reflection).toEqual({ re: 0.1, im: -0.1 });
  });

  it('reads an ideal open (Γ = 1) as loadOhm null', () => {
    expect(parseSweepCsv('frequency_hz,s11_re,s11_im\n1000000,1,0\n').points[0]?.loadOhm).toBeNull();
  });

  it('reads back what analysedPointsToCsv writes', () => {
    const points = DIPOLE_FREQUENCIES_HZ.map((f) => {
      const z = dipoleImpedance(f);
      return { frequencyHz: f, loadOhm: { re: z.re, im: z.im } };
    });
    const csv = analysedPointsToCsv(analyseSweep(points, { referenceOhm: 50 }).points, { sweepName: 'Larkspur Hill, 40 m' });
    const again = parseSweepCsv(csv);
    again.points.forEach((p, i) => expect(p.loadOhm).toEqual(points[i]?.loadOhm));
  });
});

describe('malformed CSV is refused with the line and the reason', () => {
  it.each([
    { name: 'an empty file', text: '', line: 1, reason: /empty/ },
    { name: 'a header of unknown columns', text: 'freq,re,im\n1,2,3\n', line: 1, reason: /frequency_hz, r_ohm, x_ohm/ },
    { name: 'a header mixing both forms', text: 'frequency_hz,r_ohm,x_ohm,s11_re,s11_im\n', line: 1, reason: /one form only/ },
    { name: 'a header with half a form', text: 'frequency_hz,r_ohm,s11_im\n', line: 1, reason: /one form only/ },
    { name: 'a repeated column', text: 'frequency_hz,r_ohm,x_ohm,r_ohm\n', line: 1, reason: /appears twice/ },
    { name: 'a header without data', text: '# note\nfrequency_hz,r_ohm,x_ohm\n\n', line: 2, reason: /no data rows/ },
    { name: 'a non-numeric cell', text: 'frequency_hz,r_ohm,x_ohm\n7e6,50,0\n7.1e6,fifty,0\n', line: 3, reason: /"fifty" in column r_ohm is not a number/ },
    { name: 'a decimal comma', text: 'frequency_hz;r_ohm;x_ohm\n7100000;50,5;0\n', line: 2, reason: /decimal point/ },
    { name: 'a missing value', text: 'frequency_hz,r_ohm,x_ohm\n7e6,50\n', line: 2, reason: /missing value in column x_ohm/ },
    { name: 'an empty cell', text: 'frequency_hz,r_ohm,x_ohm\n7e6,,3\n', line: 2, reason: /missing value in column r_ohm/ },
    { name: 'a decreasing frequency', text: 'frequency_hz,r_ohm,x_ohm\n7.2e6,50,0\n\n7.1e6,50,0\n', line: 4, reason: /strictly increase/ },
    { name: 'a row too wide', text: 'frequency_hz,r_ohm,x_ohm\n7e6,50,0,9\n', line: 2, reason: /4 cells/ },
    { name: 'binary garbage', text: 'PK\u0003\u0004\u0000\u0000', line: 1, reason: /binary/ },
  ])('refuses $name at line $line', ({ text, line, reason }) => {
    const e = formatError(() => parseSweepCsv(text));
    expect(e.line).toBe(line);
    expect(e.reason).toMatch(reason);
  });
});

describe('CSV export is safe to open in a spreadsheet', () => {
  // Source for the escaping rule: OWASP "CSV Injection" guidance (cells starting with = + - @ tab CR).
  it.each([
    ['=HYPERLINK("http://example.invalid","x")', `"'=HYPERLINK(""http://example.invalid"",""x"")"`],
    ['+1+2', "'+1+2"],
    ['-2+3', "'-2+3"],
    ['@SUM(A1:A2)', "'@SUM(A1:A2)"],
    ['\tcmd', "'\tcmd"],
    ['\rcmd', `"'\rcmd"`],
    ['Larkspur Hill', 'Larkspur Hill'],
    ['Larkspur Hill, 40 m', '"Larkspur Hill, 40 m"'],
    ['say "hello"', '"say ""hello"""'],
  ])('writes the text %j as %j', (text, cell) => {
    expect(csvCell(text)).toBe(cell);
  });

  it('writes numbers as plain numbers with full precision, negative ones without an apostrophe', () => {
    expect(csvCell(-12.5)).toBe('-12.5');
    expect(csvCell(0.1 + 0.2)).toBe('0.30000000000000004');
    expect(csvCell(-0)).toBe('0');
    expect(csvCell(null)).toBe('');
    expect(() => csvCell(Number.POSITIVE_INFINITY)).toThrow(RangeError);
  });

  it('exports every analysed point with empty cells for unbounded figures and an escaped sweep name', () => {
    const analysis = analyseSweep(
      [
        { frequencyHz: 7.0e6, loadOhm: { re: 50, im: -12.345678901234567 } },
        { frequencyHz: 7.1e6, loadOhm: null },
      ],
      { referenceOhm: 50 },
    );
    const csv = analysedPointsToCsv(analysis.points, { sweepName: '=cmd|calc' });
    const rows = csv.split('\r\n');
    expect(rows[0]).toBe('sweep,frequency_hz,r_ohm,x_ohm,reflection_re,reflection_im,reflection_magnitude,reflection_angle_deg,swr,return_loss_db');
    expect(rows[1]?.startsWith("'=cmd|calc,7000000,50,-12.345678901234567,")).toBe(true);
    const p0 = analysis.points[0];
    expect(rows[1]?.split(',').slice(4).map(Number)).toEqual([p0?.reflection.re, p0?.reflection.im, p0?.reflection.magnitude, p0?.reflection.angleDeg, p0?.swr, p0?.returnLossDb]);
    expect(rows[2]).toBe("'=cmd|calc,7100000,,,1,0,1,0,,0");
    expect(rows[3]).toBe('');
  });

  it('uses a semicolon when asked, quoting text that contains one', () => {
    const analysis = analyseSweep([{ frequencyHz: 1e6, loadOhm: { re: 75, im: 0 } }], { referenceOhm: 50 });
    const csv = analysedPointsToCsv(analysis.points, { sweepName: 'a;b', delimiter: ';' });
    expect(csv.split('\r\n')[1]?.startsWith('"a;b";1000000;75;0;')).toBe(true);
  });
});
