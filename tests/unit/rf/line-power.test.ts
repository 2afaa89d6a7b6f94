import { describe, expect, it } from 'vitest';
import { findCable } from '../../../shared/rf/cables.ts';
import { SPEED_OF_LIGHT_M_PER_S } from '../../../shared/rf/constants.ts';
import { attenuatorSection, cascadeLines, lineFromCable, lineFromLossSpec, lineFromRlgc, readingPeaks, transformLine, UNRATED_LINE_CAUTION_V, voltageCautions, type LineModel } from '../../../shared/rf/line.ts';
import { reflectionCoefficient } from '../../../shared/rf/reflection.ts';
import { handbookTotalLossDb } from '../../../shared/rf/refer.ts';
import { refWaveAlongLine } from '../../helpers/rf-reference.ts';

const Z50 = { re: 50, im: 0 };

interface Case {
  name: string;
  line: LineModel;
  load: { re: number; im: number };
  frequencyHz: number;
  powerW: number;
  /** Compare the positions of the maxima too (only where the maximum is unique: lossy lines). */
  positions: boolean;
}

const CASES: Case[] = [
  {
    name: '30 m of RG-58/U at 28 MHz into 150 + j80 Ω',
    line: lineFromCable(findCable('rg-58')!, 30, 28e6),
    load: { re: 150, im: 80 },
    frequencyHz: 28e6,
    powerW: 100,
    positions: true,
  },
  {
    name: '45 m of a lossy RLGC line with a complex Z0 at 2 MHz into 12 − j40 Ω',
    line: lineFromRlgc({ rOhmPerM: 0.4, lHPerM: 260e-9, gSPerM: 5e-5, cFPerM: 95e-12 }, 45, 2e6),
    load: { re: 12, im: -40 },
    frequencyHz: 2e6,
    powerW: 400,
    positions: true,
  },
  {
    name: '120 m of 450 Ω window line at 7 MHz into 35 Ω (several wavelengths)',
    line: lineFromCable(findCable('window-line-450')!, 120, 7e6),
    load: { re: 35, im: 0 },
    frequencyHz: 7e6,
    powerW: 1000,
    positions: true,
  },
  {
    name: '9 m of lossless 75 Ω line at 50 MHz into 20 + j100 Ω',
    line: lineFromLossSpec({ impedanceOhm: { re: 75, im: 0 }, velocityFactor: 0.82, lossDbPer100m: 0, lengthM: 9 }, 50e6),
    load: { re: 20, im: 100 },
    frequencyHz: 50e6,
    powerW: 50,
    positions: false,
  },
];

describe('powers and maxima agree with complex.js sampling V(d) = A·e^{γd} + B·e^{−γd} 200 001 times', () => {
  // Sampling at spacing h misses a smooth maximum by at most ~(βh)²/2 relative; with βh ≤ 2e-4 here
  // that is below 1e-7, so the sampled value brackets ours from below within 1e-6 relative.
  for (const c of CASES) {
    it(`matches for ${c.name}`, () => {
      const ours = transformLine(c.line, c.load, c.frequencyHz, c.powerW);
      const ref = refWaveAlongLine(c.line.characteristicOhm, c.line.propagationPerM, c.line.lengthM, c.load, c.powerW, 200_000);
      expect(ref.inputW).toBeCloseTo(c.powerW, 9);
      expect(ours.power?.inputW).toBe(c.powerW);
      expect(Math.abs((ours.power?.loadW as number) - ref.loadW) / ref.loadW).toBeLessThan(1e-10);
      const peaks = ours.peaks!;
      expect(peaks.maxVoltageV).toBeGreaterThanOrEqual(ref.maxVoltageV * (1 - 1e-12));
      expect(peaks.maxVoltageV).toBeLessThanOrEqual(ref.maxVoltageV * (1 + 1e-6));
      expect(peaks.maxCurrentA).toBeGreaterThanOrEqual(ref.maxCurrentA * (1 - 1e-12));
      expect(peaks.maxCurrentA).toBeLessThanOrEqual(ref.maxCurrentA * (1 + 1e-6));
      if (c.positions) {
        const wavelengthM = (2 * Math.PI) / c.line.propagationPerM.im;
        expect(Math.abs(peaks.maxVoltageAtM - ref.maxVoltageAtM)).toBeLessThan(1e-3 * wavelengthM);
        expect(Math.abs(peaks.maxCurrentAtM - ref.maxCurrentAtM)).toBeLessThan(1e-3 * wavelengthM);
      }
      expect(peaks.maxVoltageAtM).toBeGreaterThanOrEqual(0);
      expect(peaks.maxVoltageAtM).toBeLessThanOrEqual(c.line.lengthM);
    });
  }
});

describe('standing-wave maxima on a lossless line follow V = √(P·Z0·SWR) and I = √(P·SWR/Z0)', () => {
  // Common practice (from |V|max = |V+|(1 + |Γ|) and P = |V+|²(1 − |Γ|²)/Z0): 100 W at SWR 3 on 50 Ω
  // gives 122.47 V and 2.449 A RMS.
  it('gives 122.47 V and 2.449 A for 100 W into 150 Ω on 50 Ω line', () => {
    const f = 21e6;
    const line = lineFromLossSpec({ impedanceOhm: Z50, velocityFactor: 0.66, lossDbPer100m: 0, lengthM: 11.3 }, f);
    const r = transformLine(line, { re: 150, im: 0 }, f, 100);
    expect(r.peaks?.maxVoltageV).toBeCloseTo(Math.sqrt(100 * 50 * 3), 9);
    expect(r.peaks?.maxCurrentA).toBeCloseTo(Math.sqrt((100 * 3) / 50), 11);
    expect(r.power?.loadW).toBe(100);
    expect(r.power?.lineDissipationW).toBe(0);
  });

  it('puts the voltage maximum at the load of a high-resistance load shorter than a quarter wave', () => {
    const f = 14e6;
    const quarterM = (0.66 * SPEED_OF_LIGHT_M_PER_S) / f / 4;
    const line = lineFromLossSpec({ impedanceOhm: Z50, velocityFactor: 0.66, lossDbPer100m: 0, lengthM: quarterM * 0.6 }, f);
    const r = transformLine(line, { re: 500, im: 0 }, f, 10);
    expect(r.peaks?.maxVoltageAtM).toBeCloseTo(line.lengthM, 12);
  });
});

describe('the handbook total-loss formula agrees with the full wave solution where its assumptions hold', () => {
  // ARRL Handbook / Antenna Book total-loss formula (from memory): TL = 10·log10((a² − ρ²)/(a(1 − ρ²))),
  // a = 10^(ML/10). It assumes a real Z0 with |Γ| measured against it; for such a line it is exact,
  // whatever the load's phase, so agreement is to rounding.
  it('matches for a real-Z0 line at several loads', () => {
    const f = 3.6e6;
    const line = lineFromCable(findCable('rg-58')!, 60, f);
    for (const load of [{ re: 50, im: 0 }, { re: 200, im: 0 }, { re: 10, im: 35 }, { re: 900, im: -1200 }, { re: 1, im: 0 }]) {
      const r = transformLine(line, load, f);
      const rho = r.atLoad.reflection.magnitude;
      expect(r.totalLossDb as number).toBeCloseTo(handbookTotalLossDb(r.matchedLossDb, rho) as number, 11);
    }
  });

  it('differs measurably at low frequency on a lossy RLGC line, where Z0 is markedly complex', () => {
    // 0.1 Ω/m against ωL = 0.16 Ω/m at 100 kHz: Z0 ≈ 56 − j12 Ω. The handbook's real-Z0 assumption fails.
    const f = 1e5;
    const line = lineFromRlgc({ rOhmPerM: 0.1, lHPerM: 250e-9, gSPerM: 0, cFPerM: 100e-12 }, 400, f);
    expect(Math.abs(line.characteristicOhm.im)).toBeGreaterThan(5);
    const r = transformLine(line, { re: 5, im: 0 }, f);
    const rho = Math.hypot(reflectionCoefficient({ re: 5, im: 0 }, line.characteristicOhm).re, reflectionCoefficient({ re: 5, im: 0 }, line.characteristicOhm).im);
    expect(Math.abs((r.totalLossDb as number) - (handbookTotalLossDb(r.matchedLossDb, rho) as number))).toBeGreaterThan(0.01);
  });
});

describe('high voltage on a rated cable raises a caution', () => {
  it('adds a caution that defers to codes and licensed practice when the peak exceeds the rating', () => {
    // 1 kW into a 1500 Ω load (SWR 30) through 10 m of RG-8X at 7 MHz: about 490 W reach the load,
    // so the load voltage alone is near √(490·1500) ≈ 860 V against a 600 V rating.
    const f = 7e6;
    const r = transformLine(lineFromCable(findCable('rg-8x')!, 10, f), { re: 1500, im: 0 }, f, 1000);
    expect(r.peaks!.maxVoltageV).toBeGreaterThan(600);
    expect(r.cautions).toHaveLength(1);
    expect(r.cautions[0]).toMatch(/RG-8X/);
    expect(r.cautions[0]).toMatch(/licensed practice/);
  });

  it('adds no caution below the rating or without a power', () => {
    const f = 3.7e6;
    const line = lineFromCable(findCable('rg-58')!, 20, f);
    expect(transformLine(line, { re: 60, im: 0 }, f, 100).cautions).toEqual([]);
    expect(transformLine(line, { re: 3000, im: 0 }, f).cautions).toEqual([]);
  });
});

describe('a line of several sections', () => {
  const f = 7.1e6;
  const sections = [attenuatorSection(0.2, Z50), lineFromCable(findCable('rg-8x')!, 25, f), lineFromCable(findCable('rg-213')!, 40, f)];
  const load = { re: 110, im: -60 };

  it('reports totals that chain the sections end to end', () => {
    const r = cascadeLines(sections, load, f, 500);
    expect(r.sections).toHaveLength(3);
    expect(r.inputOhm).toEqual(r.sections[0]?.inputOhm);
    expect(r.sections[0]?.power?.loadW).toBe(r.sections[1]?.power?.inputW);
    expect(r.power!.inputW).toBe(500);
    expect(r.power!.loadW + r.power!.lineDissipationW).toBeCloseTo(500, 10);
    const sum = r.sections.reduce((s, x) => s + (x.totalLossDb as number), 0);
    expect(r.totalLossDb as number).toBeCloseTo(sum, 12);
    expect(r.totalLossDb as number).toBeCloseTo(10 * Math.log10(500 / r.power!.loadW), 10);
    expect(r.matchedLossDb).toBeCloseTo(0.2 + r.sections[1]!.matchedLossDb + r.sections[2]!.matchedLossDb, 12);
  });

  it('measures peak positions from the input of the first section', () => {
    const r = cascadeLines(sections, load, f, 500);
    const third = r.sections[2]!.peaks!;
    if (r.peaks!.maxVoltageV === third.maxVoltageV) expect(r.peaks!.maxVoltageAtM).toBeCloseTo(25 + third.maxVoltageAtM, 12);
    expect(r.peaks!.maxVoltageAtM).toBeLessThanOrEqual(65);
    expect(r.peaks!.maxVoltageV).toBe(Math.max(...r.sections.map((s) => s.peaks!.maxVoltageV)));
  });
});

describe('a line with no voltage rating is cautioned above 500 V RMS', () => {
  it('names the bare conductors of the catalog\'s balanced lines, and asks for a rating on other lines', () => {
    // 1,500 W into 30 m of 450 Ω window line ending in 3,150 Ω: SWR 7, Vmax ≈ √(1500 · 450 · 7) ≈ 2,174 V (common practice).
    const f = 7.1e6;
    const window = transformLine(lineFromCable(findCable('window-line-450')!, 30, f), { re: 3150, im: 0 }, f, 1500);
    expect(window.cautions).toHaveLength(1);
    expect(window.cautions[0]).toMatch(/conductors are bare/);
    const hardline = transformLine(lineFromCable(findCable('hardline-half-inch')!, 30, f), { re: 350, im: 0 }, f, 1500);
    expect(hardline.cautions[0]).toMatch(/no voltage rating is known/);
  });

  it('stays quiet at or under the threshold, and for an unrated connector beside a cable', () => {
    expect(UNRATED_LINE_CAUTION_V).toBe(500);
    const line = lineFromCable(findCable('open-wire-600')!, 20, 3.7e6);
    expect(voltageCautions(UNRATED_LINE_CAUTION_V, line)).toEqual([]);
    expect(voltageCautions(UNRATED_LINE_CAUTION_V + 1, line)).toHaveLength(1);
    expect(voltageCautions(5000, attenuatorSection(0.1, { re: 50, im: 0 }))).toEqual([]);
  });
});

describe('voltage and current maxima of a reading in watts', () => {
  it('equal √(P·Z0·SWR) and √(P·SWR/Z0) on a lossless line (hand computation, common practice)', () => {
    // 2,000 W forward, 500 W reflected: |Γ| 0.5, SWR 3, 1,500 W net on 450 Ω.
    const line = lineFromLossSpec({ impedanceOhm: { re: 450, im: 0 }, velocityFactor: 0.91, lossDbPer100m: 0, lengthM: 30 }, 7.1e6);
    const { peaks } = readingPeaks([line], 2000, 500);
    expect(peaks.maxVoltageV).toBeCloseTo(Math.sqrt(1500 * 450 * 3), 9);
    expect(peaks.maxCurrentA).toBeCloseTo(Math.sqrt((1500 * 3) / 450), 12);
  });

  it('are largest at the input of a uniform lossy line, and in the higher-impedance section of two', () => {
    // One section: √(a·Pf) + √(Pr/a) ≤ √Pf + √Pr whenever the load reflects no more than reaches it (Pr ≤ a²·Pf; AM-GM).
    const lossy = lineFromLossSpec({ impedanceOhm: { re: 50, im: 0 }, velocityFactor: 0.66, lossDbPer100m: 10, lengthM: 30 }, 7.1e6);
    const one = readingPeaks([lossy], 1000, 200).peaks;
    expect(one.maxVoltageAtM).toBe(0);
    expect(one.maxVoltageV).toBeCloseTo(Math.sqrt(50) * (Math.sqrt(1000) + Math.sqrt(200)), 9);
    // 10 m of 50 Ω then 20 m of 450 Ω, both lossless: the voltage crest is on the 450 Ω line, the current crest on the 50 Ω one.
    const coax = lineFromLossSpec({ impedanceOhm: { re: 50, im: 0 }, velocityFactor: 0.66, lossDbPer100m: 0, lengthM: 10 }, 7.1e6);
    const ladder = lineFromLossSpec({ impedanceOhm: { re: 450, im: 0 }, velocityFactor: 0.91, lossDbPer100m: 0, lengthM: 20 }, 7.1e6);
    const two = readingPeaks([coax, ladder], 1000, 250).peaks;
    expect(two.maxVoltageV).toBeCloseTo(Math.sqrt(450) * (Math.sqrt(1000) + Math.sqrt(250)), 9);
    expect(two.maxVoltageAtM).toBe(10);
    expect(two.maxCurrentA).toBeCloseTo((Math.sqrt(1000) + Math.sqrt(250)) / Math.sqrt(50), 12);
    expect(two.maxCurrentAtM).toBe(0);
  });
});
