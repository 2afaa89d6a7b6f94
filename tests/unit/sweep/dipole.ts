// The invented test antenna: the 40-m-band wire dipole of the Larkspur Hill radio club (an invented
// station), modelled as a series RLC circuit Z(f) = R + j(2πfL − 1/(2πfC)) with R = 58 ohm,
// L = 12 µH and C chosen for series resonance at 7.125 MHz. Thirty points, 6.900 to 7.335 MHz in
// 15 kHz steps. The model is ours; only its arithmetic matters to the tests.
import ComplexJs from 'complex.js';

export const DIPOLE_R_OHM = 58;
export const DIPOLE_L_H = 12e-6;
export const DIPOLE_F0_HZ = 7.125e6;
export const DIPOLE_C_F = 1 / ((2 * Math.PI * DIPOLE_F0_HZ) ** 2 * DIPOLE_L_H);

export const DIPOLE_FREQUENCIES_HZ: number[] = Array.from({ length: 30 }, (_, i) => 6.9e6 + i * 15e3);

/** Series RLC impedance of the test dipole, computed with complex.js. */
export function dipoleImpedance(frequencyHz: number): ComplexJs {
  const w = 2 * Math.PI * frequencyHz;
  return new ComplexJs(DIPOLE_R_OHM, w * DIPOLE_L_H - 1 / (w * DIPOLE_C_F));
}

export type Unit = 'Hz' | 'kHz' | 'MHz' | 'GHz';
export type Parameter = 'S' | 'Z' | 'Y';
export type Format = 'MA' | 'DB' | 'RI';

const UNIT_HZ: Record<Unit, number> = { Hz: 1, kHz: 1e3, MHz: 1e6, GHz: 1e9 };

function pair(x: ComplexJs, format: Format): string {
  if (format === 'RI') return `${x.re} ${x.im}`;
  const deg = (x.arg() * 180) / Math.PI;
  return format === 'MA' ? `${x.abs()} ${deg}` : `${20 * Math.log10(x.abs())} ${deg}`;
}

/**
 * The dipole sweep written as a one-port Touchstone file in the given form. Version 1 Z and Y data
 * are normalized to R; Version 2 Z and Y data are in ohms and siemens (Touchstone File Format Specification 2.0, § Option Line; the Version 2 reading from memory).
 */
export function dipoleTouchstone(form: { unit: Unit; parameter: Parameter; format: Format; referenceOhm: number; version: 1 | 2; optionLine?: string }): string {
  const { unit, parameter, format, referenceOhm: r, version } = form;
  const out: string[] = [];
  if (version === 2) out.push('[Version] 2.0');
  out.push('! Larkspur Hill radio club, 40 m dipole, series RLC model (invented test data)');
  out.push(form.optionLine ?? `# ${unit} ${parameter} ${format} R ${r}`);
  if (version === 2) out.push('[Number of Ports] 1', `[Number of Frequencies] ${DIPOLE_FREQUENCIES_HZ.length}`, '[Network Data]');
  for (const f of DIPOLE_FREQUENCIES_HZ) {
    const z = dipoleImpedance(f);
    let x: ComplexJs;
    if (parameter === 'S') x = z.sub(r).div(z.add(r));
    else if (parameter === 'Z') x = version === 1 ? z.div(r) : z;
    else x = version === 1 ? z.inverse().mul(r) : z.inverse();
    out.push(`${f / UNIT_HZ[unit]} ${pair(x, format)}`);
  }
  if (version === 2) out.push('[End]');
  return `${out.join('\n')}\n`;
}
