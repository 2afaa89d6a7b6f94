import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { lNetworkSolutions, withStresses, type MatchSolution } from '../../../shared/rf/match.ts';

// Hand computation: the textbook resistive L-network (Q = √(Rhigh/Rlow − 1), shunt reactance
// Rhigh/Q across the high side, series reactance Q·Rlow on the low side; e.g. the ARRL Handbook's
// L-network section, from memory), then Kirchhoff's current and voltage laws on the two elements
// with P = |I|²·R at each end. Identities: a lossless network delivers all its input power to the
// load (conservation), and its reactive powers add up to the input's minus the load's (Tellegen).

const P = 100;

function solutionWith(solutions: MatchSolution[], sourceSide: 'series' | 'shunt', positiveSeries: boolean): MatchSolution {
  return solutions.find((s) => s.sourceSide === sourceSide && s.elements.find((e) => e.position === 'series')!.reactanceOhm > 0 === positiveSeries)!;
}

describe('each element\'s voltage, current and reactive power, recomputed by hand', () => {
  it('matches 200 Ω to 50 Ω with the shunt element across the load (Q = √3)', () => {
    const s = solutionWith(withStresses(lNetworkSolutions({ re: 200, im: 0 }, { re: 50, im: 0 }, 7.1e6), P), 'series', true);
    expect(s.topology).toBe('shuntAtLoad');
    const [series, shunt] = s.elements as [NonNullable<MatchSolution['elements'][0]>, NonNullable<MatchSolution['elements'][0]>];
    // By hand: Xseries = 50·√3 = 86.60 Ω, Xshunt = 200/√3 = 115.47 Ω.
    // Load voltage √(P·200) = 141.42 V, across the shunt too; shunt current 141.42/115.47 = 1.2247 A.
    // Input current √(P/50) = 1.4142 A through the series element (KCL: √(0.7071² + 1.2247²) = 1.4142).
    // Series voltage 1.4142 · 86.60 = 122.47 V; each circulates 173.2 var.
    expect(Math.abs(series.reactanceOhm)).toBeCloseTo(86.6025, 3);
    expect(series.currentRmsA).toBeCloseTo(1.41421, 4);
    expect(series.voltageRmsV).toBeCloseTo(122.474, 2);
    expect(series.voltagePeakV).toBeCloseTo(122.474 * Math.SQRT2, 2);
    expect(shunt.voltageRmsV).toBeCloseTo(141.421, 2);
    expect(shunt.currentRmsA).toBeCloseTo(1.22474, 4);
    expect(Math.abs(series.reactivePowerVar!)).toBeCloseTo(173.205, 2);
    expect(Math.abs(shunt.reactivePowerVar!)).toBeCloseTo(173.205, 2);
    // An inductor absorbs reactive power, a capacitor supplies it.
    expect(Math.sign(series.reactivePowerVar!)).toBe(series.kind === 'inductor' ? 1 : -1);
    expect(Math.sign(shunt.reactivePowerVar!)).toBe(shunt.kind === 'inductor' ? 1 : -1);
  });

  it('matches 12.5 Ω to 50 Ω with the series element at the load (Q = √3)', () => {
    const s = solutionWith(withStresses(lNetworkSolutions({ re: 12.5, im: 0 }, { re: 50, im: 0 }, 7.1e6), P), 'shunt', true);
    expect(s.topology).toBe('seriesAtLoad');
    const [shunt, series] = s.elements as [NonNullable<MatchSolution['elements'][0]>, NonNullable<MatchSolution['elements'][0]>];
    // By hand: Xseries = 12.5·√3 = 21.65 Ω, Xshunt = 50/√3 = 28.87 Ω. Input voltage √(P·50) = 70.71 V
    // across the shunt: 70.71/28.87 = 2.4495 A. Load current √(P/12.5) = 2.8284 A through the series
    // element (KCL: √(1.4142² + 2.4495²) = 2.8284), dropping 2.8284 · 21.65 = 61.24 V.
    expect(shunt.voltageRmsV).toBeCloseTo(70.7107, 3);
    expect(shunt.currentRmsA).toBeCloseTo(2.44949, 4);
    expect(series.currentRmsA).toBeCloseTo(2.82843, 4);
    expect(series.voltageRmsV).toBeCloseTo(61.2372, 3);
    expect(Math.abs(shunt.reactivePowerVar!)).toBeCloseTo(173.205, 2);
    expect(Math.abs(series.reactivePowerVar!)).toBeCloseTo(173.205, 2);
  });

  it('leaves the solutions without figures when no power is given, and says which element faces the source', () => {
    const plain = lNetworkSolutions({ re: 12, im: -30 }, { re: 50, im: 0 }, 3.65e6);
    for (const s of plain) {
      expect(s.sourceSide).toBe(s.elements[0]!.position);
      for (const e of s.elements) expect(e.voltageRmsV).toBeUndefined();
    }
  });
});

describe('identities of a lossless network', () => {
  const impedance = fc.record({ re: fc.double({ min: 1, max: 2000, noNaN: true }), im: fc.double({ min: -2000, max: 2000, noNaN: true }) });

  it('delivers all of powerW to the load, and its reactive powers add up to the input\'s minus the load\'s', () => {
    fc.assert(
      fc.property(impedance, fc.double({ min: 5, max: 600, noNaN: true }), fc.double({ min: 0.1, max: 5000, noNaN: true }), (load, sourceR, powerW) => {
        for (const s of withStresses(lNetworkSolutions(load, { re: sourceR, im: 0 }, 14.2e6), powerW)) {
          // Follow the same circuit from the load end: the current into the load is that through the
          // series element when it sits at the load, else the input current less the shunt's.
          const inputCurrent2 = powerW / s.inputOhm.re;
          const loadSideElement = s.elements[s.elements.length - 1];
          let loadCurrent2: number;
          if (!loadSideElement) loadCurrent2 = inputCurrent2;
          else if (loadSideElement.position === 'series') loadCurrent2 = loadSideElement.currentRmsA! ** 2;
          else {
            // Shunt at the load: the load has the shunt's voltage across it.
            loadCurrent2 = loadSideElement.voltageRmsV! ** 2 / (load.re ** 2 + load.im ** 2);
          }
          const loadPower = loadCurrent2 * load.re;
          expect(Math.abs(loadPower - powerW)).toBeLessThanOrEqual(1e-8 * powerW);
          const reactive = s.elements.reduce((sum, e) => sum + e.reactivePowerVar!, 0) + loadCurrent2 * load.im;
          const inputReactive = inputCurrent2 * s.inputOhm.im;
          const scale = powerW + s.elements.reduce((sum, e) => sum + Math.abs(e.reactivePowerVar!), 0) + Math.abs(loadCurrent2 * load.im);
          expect(Math.abs(reactive - inputReactive)).toBeLessThanOrEqual(1e-8 * scale);
        }
      }),
      { numRuns: 300 },
    );
  });
});
