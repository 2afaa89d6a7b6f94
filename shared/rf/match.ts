import { abs, div, type Complex } from './complex.ts';
import { RfInputError } from './errors.ts';
import { requirePassiveLoad, requirePositive, requireReferenceImpedance } from './validate.ts';

/** One reactive element of a matching network. */
export interface MatchElement {
  position: 'series' | 'shunt';
  kind: 'inductor' | 'capacitor';
  /** Reactance at the design frequency; for a shunt element −1/B. */
  reactanceOhm: number;
  valueH?: number;
  valueF?: number;
  /** With a power: RMS voltage across the element, V. */
  voltageRmsV?: number;
  /** With a power: peak voltage across it, √2 · RMS (a sine wave), V. */
  voltagePeakV?: number;
  /** With a power: RMS current through it, A. */
  currentRmsA?: number;
  /** With a power: reactive power X·I², var; positive for an inductor, negative for a capacitor. */
  reactivePowerVar?: number;
}

/** One L-network; elements are listed from the source toward the load. */
export interface MatchSolution {
  topology: 'shuntAtLoad' | 'seriesAtLoad';
  elements: MatchElement[];
  /** Which element faces the source: the first of `elements`. */
  sourceSide: 'series' | 'shunt';
  /** Impedance looking into the network from the source, recomputed from the elements. */
  inputOhm: Complex;
}

function seriesElement(x: number, w: number): MatchElement {
  return x > 0
    ? { position: 'series', kind: 'inductor', reactanceOhm: x, valueH: x / w }
    : { position: 'series', kind: 'capacitor', reactanceOhm: x, valueF: -1 / (w * x) };
}

function shuntElement(b: number, w: number): MatchElement {
  return b > 0
    ? { position: 'shunt', kind: 'capacitor', reactanceOhm: -1 / b, valueF: b / w }
    : { position: 'shunt', kind: 'inductor', reactanceOhm: -1 / b, valueH: -1 / (w * b) };
}

/** Impedance seen from the source through the elements (listed source → load) into the load. */
function inputThrough(elements: MatchElement[], loadOhm: Complex): Complex {
  let z = loadOhm;
  for (let k = elements.length - 1; k >= 0; k--) {
    const e = elements[k] as MatchElement;
    if (e.position === 'series') {
      z = { re: z.re, im: z.im + e.reactanceOhm };
    } else {
      // Shunt: Y = 1/Z + jB with B = −1/X.
      const y = div({ re: 1, im: 0 }, z);
      z = div({ re: 1, im: 0 }, { re: y.re, im: y.im - 1 / e.reactanceOhm });
    }
  }
  return z;
}

/** Square roots of a discriminant that should be ≥ 0; a rounding step below zero counts as 0. */
function roots(disc: number, scale: number): number[] {
  if (disc < 0) return disc > -1e-12 * scale ? [0] : [];
  const r = Math.sqrt(disc);
  return r === 0 ? [0] : [r, -r];
}

/**
 * Every lossless L-network whose input impedance is the conjugate of the source impedance
 * (conjugate match, the classic two-element L-section analysis found in microwave engineering
 * texts). shuntAtLoad: B across the load then X in series toward the source, with
 * (B + BL)² = GL/Rt − GL² and X = Xt + B'/(GL² + B'²); seriesAtLoad: X in series with the load then
 * B across toward the source, with (X + XL)² = RL/Gt − RL² and B = Bt + X'/(RL² + X'²). Series X>0 is
 * an inductor X/ω, X<0 a capacitor −1/(ωX); shunt B>0 a capacitor B/ω, B<0 an inductor −1/(ωB).
 * @example lNetworkSolutions({ re: 200, im: -100 }, { re: 100, im: 0 }, 500e6).length // 4
 */
export function lNetworkSolutions(loadOhm: Complex, sourceOhm: Complex, frequencyHz: number): MatchSolution[] {
  const zl = requirePassiveLoad(loadOhm, 'loadOhm');
  const zs = requireReferenceImpedance(sourceOhm, 'sourceOhm');
  const f = requirePositive(frequencyHz, 'frequencyHz', 'The frequency');
  const w = 2 * Math.PI * f;
  if (zl.re === 0) return [];
  const target = { re: zs.re, im: -zs.im };
  const yt = div({ re: 1, im: 0 }, target);
  const yl = div({ re: 1, im: 0 }, zl);
  const zScale = abs(target) + abs(zl);
  const yScale = abs(yt) + abs(yl);
  // Reactances this small compared with the impedances involved are rounding residue of a zero element.
  const isZeroX = (x: number): boolean => Math.abs(x) <= 1e-12 * zScale;
  const isZeroB = (b: number): boolean => Math.abs(b) <= 1e-12 * yScale;

  const candidates: { topology: MatchSolution['topology']; x: number; b: number }[] = [];
  const g = yl.re;
  for (const bp of roots(g / target.re - g * g, g / target.re)) {
    candidates.push({ topology: 'shuntAtLoad', b: bp - yl.im, x: target.im + bp / (g * g + bp * bp) });
  }
  const r = zl.re;
  for (const xp of roots(r / yt.re - r * r, r / yt.re)) {
    candidates.push({ topology: 'seriesAtLoad', x: xp - zl.im, b: yt.im + xp / (r * r + xp * xp) });
  }

  const solutions: MatchSolution[] = [];
  const seen = new Set<string>();
  for (const c of candidates) {
    const elements: MatchElement[] = [];
    const series = isZeroX(c.x) ? null : seriesElement(c.x, w);
    const shunt = isZeroB(c.b) ? null : shuntElement(c.b, w);
    if (c.topology === 'shuntAtLoad') {
      if (series) elements.push(series);
      if (shunt) elements.push(shunt);
    } else {
      if (shunt) elements.push(shunt);
      if (series) elements.push(series);
    }
    // A network with a zero element is the same network whichever topology produced it.
    const key = elements.map((e) => `${e.position}:${e.reactanceOhm.toPrecision(9)}`).join('|');
    if (seen.has(key)) continue;
    seen.add(key);
    const inputOhm = inputThrough(elements, zl);
    if (!(Number.isFinite(inputOhm.re) && Number.isFinite(inputOhm.im))) {
      throw new RfInputError('loadOhm', 'No finite matching network follows for this load; check the load and source impedances.');
    }
    const first = elements[0];
    solutions.push({ topology: c.topology, elements, sourceSide: first ? first.position : c.topology === 'shuntAtLoad' ? 'series' : 'shunt', inputOhm });
  }
  return solutions;
}

/**
 * What each element of an L-network must stand when `powerW` (RMS) flows into the network from the
 * source: the input current |I| = √(P / Re Zin) is followed element by element towards the load by
 * Kirchhoff's laws (a series element carries the current and drops jX·I; a shunt element has the
 * voltage across it and draws V/(jX)). The network is lossless, so the load receives all of P.
 * Returns new solutions; the inputs are not changed.
 * @example withStresses(lNetworkSolutions({ re: 200, im: 0 }, { re: 50, im: 0 }, 7.1e6), 100)[0].elements[0].currentRmsA // ≈ 1.414
 */
export function withStresses(solutions: readonly MatchSolution[], powerW: number): MatchSolution[] {
  if (!(powerW >= 0) || !Number.isFinite(powerW)) throw new RfInputError('powerW', 'Power cannot be negative; give the power into the network in watts (0 or more).');
  return solutions.map((s) => {
    const zin = s.inputOhm;
    if (!(zin.re > 0)) {
      throw new RfInputError('loadOhm', 'This network presents no resistance to the source, so no power can flow into it; give the load some resistance.');
    }
    // Currents and voltages as phasors, the input current taken as the phase reference.
    let ir = Math.sqrt(powerW / zin.re);
    let ii = 0;
    let vr = ir * zin.re;
    let vi = ir * zin.im;
    const elements = s.elements.map((e) => {
      const x = e.reactanceOhm;
      let vAbs: number;
      let iAbs: number;
      if (e.position === 'series') {
        // Drop across it: jX·I.
        const dr = -x * ii;
        const di = x * ir;
        vr -= dr;
        vi -= di;
        iAbs = Math.hypot(ir, ii);
        vAbs = Math.hypot(dr, di);
      } else {
        // Drawn by it: V/(jX) = −jV/X.
        const cr = vi / x;
        const ci = -vr / x;
        ir -= cr;
        ii -= ci;
        vAbs = Math.hypot(vr, vi);
        iAbs = Math.hypot(cr, ci);
      }
      return { ...e, voltageRmsV: vAbs, voltagePeakV: Math.SQRT2 * vAbs, currentRmsA: iAbs, reactivePowerVar: e.position === 'series' ? x * iAbs * iAbs : (vAbs * vAbs) / x };
    });
    return { ...s, elements };
  });
}

/**
 * The caution every answer with component stresses carries: the figures are the minimum a part must
 * stand, not its rating.
 */
export const COMPONENT_STRESS_CAUTION =
  'Caution: these voltages and currents are what each component carries with this load at this power, in an ideal network. Choose parts rated with margin above them (common practice: twice the voltage or more for capacitors, ' +
  'and inductors that stay cool at the current), allow for a load that changes with weather or band, and use your own judgement as the builder. High RF voltages across a network can arc and cause RF burns; ' +
  'work on it only with the transmitter off and follow local codes and licensed practice.';
