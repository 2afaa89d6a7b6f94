import { describe, expect, it } from 'vitest';
import { lineFromRlgc, transformLine } from '../../../shared/rf/line.ts';
import { runNgspiceAc, type AcPoint } from '../../helpers/ngspice.ts';
import { refInputImpedance, refRlgc, relativeError, toPlain } from '../../helpers/rf-reference.ts';

// Reference: an independent circuit simulation by ngspice (Debian package `ngspice`, version 39 here).
// Zin = V(in) / (−I(V1)): ngspice counts source current flowing into the + terminal.

interface Rlgc {
  rOhmPerM: number;
  lHPerM: number;
  gSPerM: number;
  cFPerM: number;
}

function inputImpedance(point: AcPoint): { re: number; im: number } {
  const v = point.values['v(in)'] as { re: number; im: number };
  const i = point.values['i(v1)'] as { re: number; im: number };
  // V / (−I) by hand-written complex division, so the check uses nothing from shared/rf.
  const d = i.re * i.re + i.im * i.im;
  return { re: -(v.re * i.re + v.im * i.im) / d, im: -(v.im * i.re - v.re * i.im) / d };
}

function seriesLoad(rOhm: number, reactive: { lH?: number; cF?: number }, frequencyHz: number): { re: number; im: number } {
  const w = 2 * Math.PI * frequencyHz;
  if (reactive.lH !== undefined) return { re: rOhm, im: w * reactive.lH };
  return { re: rOhm, im: -1 / (w * (reactive.cF as number)) };
}

function loadNetlist(rOhm: number, reactive: { lH?: number; cF?: number }): string {
  return reactive.lH !== undefined ? `RL out mid ${rOhm}\nLL mid 0 ${reactive.lH}` : `RL out mid ${rOhm}\nCL mid 0 ${reactive.cF}`;
}

/** ngspice LTRA lossy line (exact frequency-domain solution for RLC, RC and LC lines; it rejects R and G together). */
function ltraZin(rlgc: Rlgc, lengthM: number, rOhm: number, reactive: { lH?: number; cF?: number }, analysis: string): AcPoint[] {
  const circuit = [
    'V1 in 0 DC 0 AC 1',
    'O1 in 0 out 0 lossyline',
    loadNetlist(rOhm, reactive),
    `.model lossyline ltra r=${rlgc.rOhmPerM} l=${rlgc.lHPerM} g=${rlgc.gSPerM} c=${rlgc.cFPerM} len=${lengthM}`,
  ].join('\n');
  return runNgspiceAc(circuit, analysis, ['v(in)', 'i(v1)']);
}

/** A ladder of N symmetric T sections (R/2, L/2 | G, C | R/2, L/2), each Δ = length/N long. */
function ladderZin(rlgc: Rlgc, lengthM: number, sections: number, rOhm: number, reactive: { lH?: number; cF?: number }, analysis: string): AcPoint[] {
  const dz = lengthM / sections;
  const lines = ['V1 in 0 DC 0 AC 1'];
  let node = 'in';
  for (let k = 0; k < sections; k++) {
    const next = k === sections - 1 ? 'out' : `n${k + 1}`;
    lines.push(
      `Ra${k} ${node} a${k} ${(rlgc.rOhmPerM * dz) / 2}`,
      `La${k} a${k} m${k} ${(rlgc.lHPerM * dz) / 2}`,
      `G${k} m${k} 0 m${k} 0 ${rlgc.gSPerM * dz}`,
      `C${k} m${k} 0 ${rlgc.cFPerM * dz}`,
      `Rb${k} m${k} b${k} ${(rlgc.rOhmPerM * dz) / 2}`,
      `Lb${k} b${k} ${next} ${(rlgc.lHPerM * dz) / 2}`,
    );
    node = next;
  }
  lines.push(loadNetlist(rOhm, reactive));
  return runNgspiceAc(lines.join('\n'), analysis, ['v(in)', 'i(v1)']);
}

describe('input impedance agrees with an ngspice LTRA lossy-line simulation', () => {
  // Tolerance 1e-9 relative: LTRA's AC analysis evaluates the exact exponential line solution, so
  // only double rounding (amplified by electrical lengths of up to ~800 rad at 1 GHz) and the 15
  // significant digits of the text output separate the two; the worst agreement measured was 4e-12.
  const TOL = 1e-9;

  it('matches a 25 m RLC coaxial line (R = 0.05 Ω/m, 50 Ω) with a series R–L load from 100 kHz to 1 GHz', () => {
    const rlgc = { rOhmPerM: 0.05, lHPerM: 250e-9, gSPerM: 0, cFPerM: 100e-12 };
    const points = ltraZin(rlgc, 25, 30, { lH: 100e-9 }, 'ac dec 4 1e5 1e9');
    expect(points.length).toBeGreaterThanOrEqual(17);
    for (const p of points) {
      const zl = seriesLoad(30, { lH: 100e-9 }, p.frequencyHz);
      const ours = transformLine(lineFromRlgc(rlgc, 25, p.frequencyHz), zl, p.frequencyHz).inputOhm;
      expect(relativeError(ours, inputImpedance(p)), `at ${p.frequencyHz} Hz`).toBeLessThan(TOL);
    }
  });

  it('matches a 7.3 m lossless LC line (300 Ω) with a series R–C load from 1 MHz to 300 MHz', () => {
    const rlgc = { rOhmPerM: 0, lHPerM: 1e-6, gSPerM: 0, cFPerM: 1e-6 / (300 * 300) };
    const points = ltraZin(rlgc, 7.3, 120, { cF: 15e-12 }, 'ac dec 5 1e6 3e8');
    for (const p of points) {
      const zl = seriesLoad(120, { cF: 15e-12 }, p.frequencyHz);
      const ours = transformLine(lineFromRlgc(rlgc, 7.3, p.frequencyHz), zl, p.frequencyHz).inputOhm;
      expect(relativeError(ours, inputImpedance(p)), `at ${p.frequencyHz} Hz`).toBeLessThan(TOL);
    }
  });
});

describe('input impedance agrees with an ngspice lumped RLGC ladder when the line has shunt conductance', () => {
  // LTRA refuses lines with both R and G, so the full RLGC case is simulated as a ladder of symmetric
  // T sections. A symmetric section's error expands in even powers of 1/N, so Richardson extrapolation
  // (4·Z(2N) − Z(N))/3 of the N = 200 and N = 400 ladders removes the 1/N² term; what remains (the
  // O(N⁻⁴) term for γl ≈ 5.7 rad, and the simulator's own rounding, which grows with N) measured
  // below 1e-7, hence the 2e-6 tolerance. The unextrapolated
  // 400-section ladder is also checked, against the O(N⁻²) bound 2e-4 that γl and N imply.
  const rlgc = { rOhmPerM: 0.1, lHPerM: 300e-9, gSPerM: 2e-5, cFPerM: 120e-12 };
  const lengthM = 5;
  const analysis = 'ac lin 7 1e6 3.1e7';

  it('matches a 5 m line with R, L, G and C all present and a series R–C load from 1 MHz to 31 MHz', () => {
    const coarse = ladderZin(rlgc, lengthM, 200, 80, { cF: 200e-12 }, analysis);
    const fine = ladderZin(rlgc, lengthM, 400, 80, { cF: 200e-12 }, analysis);
    expect(fine.length).toBe(7);
    fine.forEach((p, k) => {
      const c = coarse[k] as AcPoint;
      const zc = inputImpedance(c);
      const zf = inputImpedance(p);
      const extrapolated = { re: (4 * zf.re - zc.re) / 3, im: (4 * zf.im - zc.im) / 3 };
      const zl = seriesLoad(80, { cF: 200e-12 }, p.frequencyHz);
      const ours = transformLine(lineFromRlgc(rlgc, lengthM, p.frequencyHz), zl, p.frequencyHz).inputOhm;
      expect(relativeError(ours, extrapolated), `extrapolated at ${p.frequencyHz} Hz`).toBeLessThan(2e-6);
      expect(relativeError(ours, zf), `400 sections at ${p.frequencyHz} Hz`).toBeLessThan(2e-4);
    });
  });

  it('uses the same line constants as complex.js evaluating the telegrapher formulas', () => {
    for (const f of [1e3, 1e6, 3e7, 1e9]) {
      const ours = lineFromRlgc(rlgc, lengthM, f);
      const ref = refRlgc(rlgc.rOhmPerM, rlgc.lHPerM, rlgc.gSPerM, rlgc.cFPerM, f);
      expect(relativeError(ours.characteristicOhm, toPlain(ref.z0))).toBeLessThan(1e-14);
      expect(relativeError(ours.propagationPerM, toPlain(ref.gamma))).toBeLessThan(1e-14);
      const zl = { re: 80, im: -30 };
      const zin = refInputImpedance(toPlain(ref.z0), toPlain(ref.gamma), lengthM, zl);
      expect(relativeError(transformLine(ours, zl, f).inputOhm, toPlain(zin))).toBeLessThan(1e-12);
    }
  });
});
