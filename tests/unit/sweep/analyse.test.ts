import ComplexJs from 'complex.js';
import { describe, expect, it } from 'vitest';
import { RfInputError } from '../../../shared/rf/errors.ts';
import { analyseSweep, DEFAULT_THRESHOLD_SWR, parseTouchstone, type SweepPointInput } from '../../../shared/sweep/index.ts';
import { dipoleImpedance, dipoleTouchstone, DIPOLE_FREQUENCIES_HZ } from './dipole.ts';

const MHZ = 1e6;
const resistive = (mhz: number, ohm: number): SweepPointInput => ({ frequencyHz: mhz * MHZ, loadOhm: { re: ohm, im: 0 } });

// Five resistive loads against 50 ohm; SWR = R/50 above 50 ohm and 50/R below (hand calculation):
// 150 → 3, 75 → 1.5, 50 → 1, 125 → 2.5, 200 → 4.
const STEPS = [resistive(1, 150), resistive(2, 75), resistive(3, 50), resistive(4, 125), resistive(5, 200)];

function rfError(run: () => unknown): RfInputError {
  try {
    run();
  } catch (e) {
    expect(e).toBeInstanceOf(RfInputError);
    return e as RfInputError;
  }
  throw new Error('expected an RfInputError');
}

describe('per-point figures', () => {
  it('gives Γ, SWR and return loss of each load against the reference', () => {
    const { points } = analyseSweep(STEPS, { referenceOhm: 50 });
    // Hand calculation: 75 ohm on 50 ohm is Γ = 25/125 = 0.2, SWR 1.5, return loss −20·log10 0.2 = 13.979 dB.
    expect(points[1]?.reflection.re).toBeCloseTo(0.2, 15);
    expect(points[1]?.reflection.magnitude).toBeCloseTo(0.2, 15);
    expect(points[1]?.reflection.angleDeg).toBe(0);
    expect(points[1]?.swr).toBeCloseTo(1.5, 14);
    expect(points[1]?.returnLossDb).toBeCloseTo(13.979400086720377, 12);
    // A perfect match has no finite return loss.
    expect(points[2]?.swr).toBe(1);
    expect(points[2]?.returnLossDb).toBeNull();
  });

  it('matches an independent complex.js re-computation for the dipole against 50 ohm', () => {
    const pts = DIPOLE_FREQUENCIES_HZ.map((f) => {
      const z = dipoleImpedance(f);
      return { frequencyHz: f, loadOhm: { re: z.re, im: z.im } };
    });
    const { points } = analyseSweep(pts, { referenceOhm: 50 });
    points.forEach((p, i) => {
      const z = dipoleImpedance(DIPOLE_FREQUENCIES_HZ[i] as number);
      const g = z.sub(50).div(z.add(50));
      expect(p.reflection.re).toBeCloseTo(g.re, 13);
      expect(p.reflection.im).toBeCloseTo(g.im, 13);
      expect(p.reflection.angleDeg).toBeCloseTo((g.arg() * 180) / Math.PI, 10);
      expect(p.swr).toBeCloseTo((1 + g.abs()) / (1 - g.abs()), 12);
    });
  });

  it('re-reads a 75-ohm file against the 50-ohm reference asked for', () => {
    const sweep = parseTouchstone('# MHz S RI R 75\n7.1 0 0\n');
    // Hand calculation: a matched 75-ohm load on a 50-ohm system has SWR 1.5.
    expect(analyseSweep(sweep.points, { referenceOhm: 50 }).points[0]?.swr).toBeCloseTo(1.5, 14);
  });
});

describe('loads near the largest double', () => {
  it('scales a huge load before dividing, matching complex.js where it does not overflow itself', () => {
    // Independent re-computation with complex.js; at 1e150 its own products stay finite.
    const z = new ComplexJs(2e150, 1e150);
    const g = z.sub(50).div(z.add(50));
    const { points } = analyseSweep([{ frequencyHz: 1e6, loadOhm: { re: 2e150, im: 1e150 } }], { referenceOhm: 50 });
    expect(points[0]?.reflection.re).toBeCloseTo(g.re, 15);
    expect(points[0]?.reflection.im).toBeCloseTo(g.im, 15);
  });

  it('gives Γ → 1 for a load of 1e308 + j1e308 ohm instead of NaN (Z ≫ R reflects like an open circuit, from the definition)', () => {
    const { points, summary } = analyseSweep(
      [
        { frequencyHz: 1e6, loadOhm: { re: 1e308, im: 1e308 } },
        { frequencyHz: 2e6, loadOhm: { re: -1e308, im: -1.7e308 } },
      ],
      { referenceOhm: 50 },
    );
    for (const p of points) {
      expect(p.reflection.re).toBeCloseTo(1, 12);
      expect(p.reflection.im).toBeCloseTo(0, 12);
      expect(Number.isFinite(p.reflection.magnitude)).toBe(true);
      expect(Number.isFinite(p.reflection.angleDeg)).toBe(true);
    }
    expect(summary.pointCount).toBe(2);
  });

  it('finds a resonance between a huge and an ordinary reactance where linear interpolation puts it', () => {
    // X goes from −1e151 to +10 Ω: the zero crossing is 10/(1e151 + 10) of the way, i.e. at 8 MHz to
    // double precision (linear interpolation by hand); a scaled reactance would put it near 7.09 MHz.
    const { summary } = analyseSweep(
      [
        { frequencyHz: 7e6, loadOhm: { re: 10, im: -1e151 } },
        { frequencyHz: 8e6, loadOhm: { re: 10, im: 10 } },
      ],
      { referenceOhm: 50 },
    );
    expect(summary.resonancesHz).toEqual([8e6]);
  });
});

describe('unbounded SWR is null', () => {
  it('treats an open circuit (loadOhm null) as Γ = 1 with SWR null and return loss 0 dB', () => {
    const { points, summary } = analyseSweep([{ frequencyHz: 1e6, loadOhm: null }], { referenceOhm: 50 });
    expect(points[0]?.reflection).toEqual({ re: 1, im: 0, magnitude: 1, angleDeg: 0 });
    expect(points[0]?.swr).toBeNull();
    expect(points[0]?.returnLossDb).toBe(0);
    expect(summary.minSwr).toBeNull();
    expect(summary.minSwrFrequencyHz).toBeNull();
    expect(summary.bands).toEqual([]);
  });

  it('gives a pure reactance exactly |Γ| = 1 and SWR null, not a huge finite number', () => {
    const p = analyseSweep([{ frequencyHz: 1e6, loadOhm: { re: 0, im: 37 } }], { referenceOhm: 50 }).points[0];
    expect(p?.reflection.magnitude).toBe(1);
    expect(p?.swr).toBeNull();
  });

  it('keeps a measured |Γ| above 1 as measured: SWR null and a negative return loss', () => {
    // Hand calculation: −10 ohm on 50 ohm is Γ = −60/40 = −1.5, return loss −20·log10 1.5 = −3.522 dB.
    const p = analyseSweep([{ frequencyHz: 1e6, loadOhm: { re: -10, im: 0 } }], { referenceOhm: 50 }).points[0];
    expect(p?.swr).toBeNull();
    expect(p?.returnLossDb).toBeCloseTo(-3.521825181113625, 12);
  });
});

describe('summary', () => {
  it('finds the minimum SWR and its frequency', () => {
    const { summary } = analyseSweep(STEPS, { referenceOhm: 50 });
    expect(summary.minSwr).toBe(1);
    expect(summary.minSwrFrequencyHz).toBe(3 * MHZ);
    expect(summary).toMatchObject({ pointCount: 5, startHz: 1 * MHZ, stopHz: 5 * MHZ, thresholdSwr: DEFAULT_THRESHOLD_SWR });
  });

  it('uses 2 as the default threshold (common practice)', () => {
    expect(DEFAULT_THRESHOLD_SWR).toBe(2);
  });

  it('interpolates band edges linearly in SWR between neighbouring points', () => {
    // Hand calculation: start between 1 MHz (SWR 3) and 2 MHz (1.5): 1 + (2 − 3)/(1.5 − 3) = 1.6667 MHz;
    // stop between 3 MHz (1) and 4 MHz (2.5): 3 + (2 − 1)/(2.5 − 1) = 3.6667 MHz.
    const { bands } = analyseSweep(STEPS, { referenceOhm: 50 }).summary;
    expect(bands).toHaveLength(1);
    expect(bands[0]?.startHz).toBeCloseTo((1 + 2 / 3) * MHZ, 6);
    expect(bands[0]?.stopHz).toBeCloseTo((3 + 2 / 3) * MHZ, 6);
  });

  it('honours a custom threshold and finds every band', () => {
    // SWR 3, 1.5, 1, 2.5, 4 then 2 and 1.2 at 6 and 7 MHz; threshold 2.8.
    const pts = [...STEPS, resistive(6, 100), resistive(7, 60)];
    const { bands } = analyseSweep(pts, { referenceOhm: 50, thresholdSwr: 2.8 }).summary;
    // Hand calculation: 1 + (2.8 − 3)/(1.5 − 3) = 1.1333; 4 + (2.8 − 2.5)/(4 − 2.5) = 4.2; 5 + (2.8 − 4)/(2 − 4) = 5.6 MHz.
    expect(bands).toHaveLength(2);
    expect(bands[0]?.startHz).toBeCloseTo((1 + 0.2 / 1.5) * MHZ, 6);
    expect(bands[0]?.stopHz).toBeCloseTo(4.2 * MHZ, 6);
    expect(bands[1]?.startHz).toBeCloseTo(5.6 * MHZ, 6);
    // A band touching the sweep's end stops at that end.
    expect(bands[1]?.stopHz).toBe(7 * MHZ);
  });

  it('starts a band at the first point when the sweep opens under the threshold', () => {
    const { bands } = analyseSweep([resistive(1, 50), resistive(2, 200)], { referenceOhm: 50 }).summary;
    // Hand calculation: 1 + (2 − 1)/(4 − 1) = 1.3333 MHz.
    expect(bands).toEqual([{ startHz: 1 * MHZ, stopHz: expect.closeTo((1 + 1 / 3) * MHZ, 6) as number }]);
  });

  it('puts a band edge on the in-band point when its neighbour has unbounded SWR', () => {
    const pts: SweepPointInput[] = [{ frequencyHz: 1 * MHZ, loadOhm: null }, resistive(2, 50), { frequencyHz: 3 * MHZ, loadOhm: { re: 0, im: 10 } }];
    expect(analyseSweep(pts, { referenceOhm: 50 }).summary.bands).toEqual([{ startHz: 2 * MHZ, stopHz: 2 * MHZ }]);
  });

  it('finds a resonance where the reactance changes sign, interpolated linearly', () => {
    const pts: SweepPointInput[] = [
      { frequencyHz: 7.0 * MHZ, loadOhm: { re: 40, im: -30 } },
      { frequencyHz: 7.1 * MHZ, loadOhm: { re: 45, im: 10 } },
      { frequencyHz: 7.2 * MHZ, loadOhm: { re: 50, im: 40 } },
    ];
    // Hand calculation: 7.0 + 30/(10 + 30)·0.1 = 7.075 MHz.
    const [f] = analyseSweep(pts, { referenceOhm: 50 }).summary.resonancesHz;
    expect(f).toBeCloseTo(7.075 * MHZ, 6);
  });

  it('finds the dipole series resonance near 7.125 MHz and both parallel and series resonances of a trap', () => {
    const pts = DIPOLE_FREQUENCIES_HZ.map((f) => {
      const z = dipoleImpedance(f);
      return { frequencyHz: f, loadOhm: { re: z.re, im: z.im } };
    });
    const [f0, ...rest] = analyseSweep(pts, { referenceOhm: 50 }).summary.resonancesHz;
    expect(rest).toEqual([]);
    // Hand calculation: the model resonates at 7.125 MHz; the reactance is near-linear across a 15 kHz step.
    expect(Math.abs((f0 as number) - 7.125e6)).toBeLessThan(50);
    const trap: SweepPointInput[] = [
      { frequencyHz: 1 * MHZ, loadOhm: { re: 5, im: 200 } },
      { frequencyHz: 2 * MHZ, loadOhm: { re: 900, im: -100 } },
      { frequencyHz: 3 * MHZ, loadOhm: { re: 30, im: 100 } },
    ];
    const found = analyseSweep(trap, { referenceOhm: 50 }).summary.resonancesHz;
    // Hand calculation: 1 + 200/300 = 1.6667 MHz; 2 + 100/200 = 2.5 MHz.
    expect(found[0]).toBeCloseTo((1 + 2 / 3) * MHZ, 6);
    expect(found[1]).toBeCloseTo(2.5 * MHZ, 6);
  });

  it('counts a run of exactly-zero reactance between opposite signs once, at its middle', () => {
    const pts: SweepPointInput[] = [
      { frequencyHz: 1 * MHZ, loadOhm: { re: 50, im: -5 } },
      { frequencyHz: 2 * MHZ, loadOhm: { re: 50, im: 0 } },
      { frequencyHz: 3 * MHZ, loadOhm: { re: 50, im: 0 } },
      { frequencyHz: 4 * MHZ, loadOhm: { re: 50, im: 5 } },
      { frequencyHz: 5 * MHZ, loadOhm: { re: 50, im: 0 } },
      { frequencyHz: 6 * MHZ, loadOhm: { re: 50, im: 7 } },
    ];
    // 2 and 3 MHz lie between −5 and +5: one resonance at 2.5 MHz; the zero at 5 MHz is a touch, not a sign change.
    expect(analyseSweep(pts, { referenceOhm: 50 }).summary.resonancesHz).toEqual([2.5 * MHZ]);
  });

  it('does not look for a sign change across an open-circuit point', () => {
    const pts: SweepPointInput[] = [
      { frequencyHz: 1 * MHZ, loadOhm: { re: 500, im: 900 } },
      { frequencyHz: 2 * MHZ, loadOhm: null },
      { frequencyHz: 3 * MHZ, loadOhm: { re: 500, im: -900 } },
    ];
    expect(analyseSweep(pts, { referenceOhm: 50 }).summary.resonancesHz).toEqual([]);
  });
});

describe('acceptance verdict', () => {
  it('passes a maximum-SWR mask over the good part of the sweep and reports the worst point', () => {
    const { verdict } = analyseSweep(STEPS, { referenceOhm: 50, mask: { maxSwr: 2, startHz: 2 * MHZ, stopHz: 3 * MHZ } });
    expect(verdict?.pass).toBe(true);
    expect(verdict?.worst.frequencyHz).toBe(2 * MHZ);
    expect(verdict?.worst.swr).toBeCloseTo(1.5, 14);
    expect(verdict?.mask).toEqual({ maxSwr: 2, startHz: 2 * MHZ, stopHz: 3 * MHZ });
  });

  it('fails a maximum-SWR mask over the whole sweep, with the worst point at 5 MHz', () => {
    const { verdict } = analyseSweep(STEPS, { referenceOhm: 50, mask: { maxSwr: 2 } });
    expect(verdict?.pass).toBe(false);
    expect(verdict?.worst).toEqual({ frequencyHz: 5 * MHZ, swr: 4, returnLossDb: expect.closeTo(4.436974992327127, 12) as number });
    expect(verdict?.mask).toEqual({ maxSwr: 2, startHz: 1 * MHZ, stopHz: 5 * MHZ });
  });

  it('judges a minimum-return-loss mask, with a perfect match passing any figure', () => {
    // Hand calculation: SWR 1.5 is 13.98 dB; SWR 2.5 is −20·log10(1.5/3.5) = 20·log10(7/3) = 7.3595 dB.
    expect(analyseSweep(STEPS, { referenceOhm: 50, mask: { minReturnLossDb: 13.9, startHz: 2 * MHZ, stopHz: 3 * MHZ } }).verdict?.pass).toBe(true);
    const fail = analyseSweep(STEPS, { referenceOhm: 50, mask: { minReturnLossDb: 10, startHz: 2 * MHZ, stopHz: 4 * MHZ } }).verdict;
    expect(fail?.pass).toBe(false);
    expect(fail?.worst.frequencyHz).toBe(4 * MHZ);
    expect(fail?.worst.returnLossDb).toBeCloseTo(7.3595357, 6);
    expect(analyseSweep([resistive(3, 50)], { referenceOhm: 50, mask: { minReturnLossDb: 60 } }).verdict?.pass).toBe(true);
  });

  it('fails a mask when an open circuit lies in its range', () => {
    const pts = [resistive(1, 50), { frequencyHz: 2 * MHZ, loadOhm: null }];
    const { verdict } = analyseSweep(pts, { referenceOhm: 50, mask: { maxSwr: 3 } });
    expect(verdict).toMatchObject({ pass: false, worst: { frequencyHz: 2 * MHZ, swr: null, returnLossDb: 0 } });
  });

  it('has no verdict without a mask', () => {
    expect(analyseSweep(STEPS, { referenceOhm: 50 }).verdict).toBeUndefined();
  });
});

describe('bad analysis input is an RfInputError naming the field', () => {
  it.each([
    { name: 'a mask starting below the sweep', options: { referenceOhm: 50, mask: { maxSwr: 2, startHz: 0.5 * MHZ } }, field: 'mask.startHz', reason: /below the sweep's first point/ },
    { name: 'a mask stopping above the sweep', options: { referenceOhm: 50, mask: { maxSwr: 2, stopHz: 6 * MHZ } }, field: 'mask.stopHz', reason: /above the sweep's last point/ },
    { name: 'a reversed mask range', options: { referenceOhm: 50, mask: { maxSwr: 2, startHz: 3 * MHZ, stopHz: 2 * MHZ } }, field: 'mask.stopHz', reason: /below mask.startHz/ },
    { name: 'a mask range between two points', options: { referenceOhm: 50, mask: { maxSwr: 2, startHz: 2.2 * MHZ, stopHz: 2.8 * MHZ } }, field: 'mask.startHz', reason: /No measured point/ },
    { name: 'a mask with both figures', options: { referenceOhm: 50, mask: { maxSwr: 2, minReturnLossDb: 10 } as never }, field: 'mask', reason: /not both/ },
    { name: 'a maximum SWR below 1', options: { referenceOhm: 50, mask: { maxSwr: 0.5 } }, field: 'mask.maxSwr', reason: /1 or more/ },
    { name: 'a threshold of 1', options: { referenceOhm: 50, thresholdSwr: 1 }, field: 'thresholdSwr', reason: /above 1/ },
    { name: 'a zero reference', options: { referenceOhm: 0 }, field: 'referenceOhm', reason: /greater than 0/ },
  ])('refuses $name', ({ options, field, reason }) => {
    const e = rfError(() => analyseSweep(STEPS, options));
    expect(e.field).toBe(field);
    expect(e.message).toMatch(reason);
  });

  it('refuses unsorted points and an empty sweep', () => {
    expect(rfError(() => analyseSweep([resistive(2, 50), resistive(1, 50)], { referenceOhm: 50 })).field).toBe('points.1.frequencyHz');
    expect(rfError(() => analyseSweep([], { referenceOhm: 50 })).field).toBe('points');
  });
});

describe('a large sweep', () => {
  it('analyses 10,000 parsed points', () => {
    const lines = ['# Hz S RI R 50'];
    for (let i = 0; i < 10_000; i++) {
      const g = new ComplexJs({ abs: 0.5 + 0.4 * Math.sin(i / 500), arg: i / 100 });
      lines.push(`${1e6 + i * 100} ${g.re} ${g.im}`);
    }
    const sweep = parseTouchstone(lines.join('\n'));
    const { points, summary } = analyseSweep(sweep.points, { referenceOhm: 50 });
    expect(points).toHaveLength(10_000);
    expect(summary.minSwr).toBeCloseTo((1 + 0.1) / (1 - 0.1), 3);
  });

  it('reads the dipole file and analyses it with bands around its resonance', () => {
    const sweep = parseTouchstone(dipoleTouchstone({ unit: 'MHz', parameter: 'S', format: 'RI', referenceOhm: 50, version: 1 }));
    const { summary } = analyseSweep(sweep.points, { referenceOhm: 50 });
    expect(summary.bands).toHaveLength(1);
    const band = summary.bands[0] as { startHz: number; stopHz: number };
    expect(band.startHz).toBeLessThan(7.125e6);
    expect(band.stopHz).toBeGreaterThan(7.125e6);
    // Hand calculation: at the series resonance Z = 58 ohm, SWR = 58/50 = 1.16; the nearest point is 7.125 MHz itself.
    expect(summary.minSwrFrequencyHz).toBe(DIPOLE_FREQUENCIES_HZ[15]);
    expect(summary.minSwr).toBeCloseTo(1.16, 9);
  });
});
