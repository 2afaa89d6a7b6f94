// Independent re-computations with complex.js, a maintained general-purpose complex-number
// library, written straight from the textbook formulas so that they share no code with shared/rf.
import Complex from 'complex.js';

export interface Plain {
  re: number;
  im: number;
}

export const toPlain = (c: Complex): Plain => ({ re: c.re, im: c.im });
export const cx = (z: Plain): Complex => new Complex(z.re, z.im);

/** Largest of the relative differences of the two parts, against the magnitude of the reference. */
export function relativeError(actual: Plain, expected: Plain): number {
  const scale = Math.hypot(expected.re, expected.im);
  return Math.hypot(actual.re - expected.re, actual.im - expected.im) / (scale === 0 ? 1 : scale);
}

/** Γ = (ZL − Z0)/(ZL + Z0). */
export function refGamma(zl: Plain, z0: Plain): Complex {
  return cx(zl).sub(cx(z0)).div(cx(zl).add(cx(z0)));
}

/** Kurokawa power-wave reflection (ZL − Z0*)/(ZL + Z0). */
export function refPowerWave(zl: Plain, z0: Plain): Complex {
  return cx(zl).sub(cx(z0).conjugate()).div(cx(zl).add(cx(z0)));
}

/** Telegrapher's-equation line constants from per-metre R, L, G, C. */
export function refRlgc(r: number, l: number, g: number, c: number, frequencyHz: number): { z0: Complex; gamma: Complex } {
  const w = 2 * Math.PI * frequencyHz;
  const z = new Complex(r, w * l);
  const y = new Complex(g, w * c);
  return { z0: z.div(y).sqrt(), gamma: z.mul(y).sqrt() };
}

/** Input impedance Zin = Z0·(ZL + Z0·tanh γl)/(Z0 + ZL·tanh γl). */
export function refInputImpedance(z0: Plain, gamma: Plain, lengthM: number, zl: Plain): Complex {
  const t = cx(gamma).mul(lengthM).tanh();
  const Z0 = cx(z0);
  const ZL = cx(zl);
  return Z0.mul(ZL.add(Z0.mul(t))).div(Z0.add(ZL.mul(t)));
}

/**
 * Voltage and current along the line from V(d) = A·e^{γd} + B·e^{−γd}, I(d) = (A·e^{γd} − B·e^{−γd})/Z0,
 * d from the load, scaled so that the net power into the input is powerW; maxima by brute-force
 * sampling at `samples` + 1 evenly spaced points.
 */
export function refWaveAlongLine(
  z0: Plain,
  gamma: Plain,
  lengthM: number,
  zl: Plain,
  powerW: number,
  samples: number,
): { inputW: number; loadW: number; maxVoltageV: number; maxVoltageAtM: number; maxCurrentA: number; maxCurrentAtM: number } {
  const Z0 = cx(z0);
  const g = cx(gamma);
  const B0 = refGamma(zl, z0);
  const at = (A: Complex, d: number): { v: Complex; i: Complex } => {
    const ePlus = g.mul(d).exp();
    const eMinus = g.mul(-d).exp();
    const fwd = A.mul(ePlus);
    const ref = A.mul(B0).mul(eMinus);
    return { v: fwd.add(ref), i: fwd.sub(ref).div(Z0) };
  };
  const power = (p: { v: Complex; i: Complex }): number => p.v.mul(p.i.conjugate()).re;
  const unit = at(new Complex(1, 0), lengthM);
  const A = new Complex(Math.sqrt(powerW / power(unit)), 0);
  const input = at(A, lengthM);
  const load = at(A, 0);
  let maxV = -1;
  let maxVAt = 0;
  let maxI = -1;
  let maxIAt = 0;
  for (let k = 0; k <= samples; k++) {
    const d = (lengthM * k) / samples;
    const p = at(A, d);
    const v = p.v.abs();
    const i = p.i.abs();
    if (v > maxV) {
      maxV = v;
      maxVAt = lengthM - d;
    }
    if (i > maxI) {
      maxI = i;
      maxIAt = lengthM - d;
    }
  }
  return { inputW: power(input), loadW: power(load), maxVoltageV: maxV, maxVoltageAtM: maxVAt, maxCurrentA: maxI, maxCurrentAtM: maxIAt };
}

/** Impedance into a chain of series reactances / shunt susceptances (source → load order) ending in ZL. */
export function refLadderInput(elements: { position: 'series' | 'shunt'; reactanceOhm: number }[], zl: Plain): Complex {
  let z = cx(zl);
  for (const e of [...elements].reverse()) {
    const x = new Complex(0, e.reactanceOhm);
    z = e.position === 'series' ? z.add(x) : z.mul(x).div(z.add(x));
  }
  return z;
}
