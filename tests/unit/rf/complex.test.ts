import Complex from 'complex.js';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { abs, add, argDeg, cexp, conj, csqrt, div, inv, mul, sub } from '../../../shared/rf/complex.ts';
import { relativeError, toPlain } from '../../helpers/rf-reference.ts';

// Reference: complex.js 2.4.3, an independent general-purpose complex-number library.

const finite = fc.double({ min: -1e6, max: 1e6, noNaN: true });
const value = fc.record({ re: finite, im: finite });

describe('plain-number complex arithmetic agrees with complex.js', () => {
  it('adds, subtracts, multiplies and conjugates alike', () => {
    fc.assert(
      fc.property(value, value, (a, b) => {
        const A = new Complex(a.re, a.im);
        const B = new Complex(b.re, b.im);
        expect(relativeError(add(a, b), toPlain(A.add(B)))).toBeLessThan(1e-15);
        expect(relativeError(sub(a, b), toPlain(A.sub(B)))).toBeLessThan(1e-15);
        expect(relativeError(mul(a, b), toPlain(A.mul(B)))).toBeLessThan(1e-14);
        expect(conj(a)).toEqual({ re: a.re, im: -a.im });
      }),
    );
  });

  it('divides and inverts alike', () => {
    fc.assert(
      fc.property(value, value, (a, b) => {
        fc.pre(Math.hypot(b.re, b.im) > 1e-9);
        const A = new Complex(a.re, a.im);
        const B = new Complex(b.re, b.im);
        expect(relativeError(div(a, b), toPlain(A.div(B)))).toBeLessThan(1e-14);
        expect(relativeError(inv(b), toPlain(B.inverse()))).toBeLessThan(1e-14);
      }),
    );
  });

  it('takes magnitudes, angles, exponentials and principal square roots alike', () => {
    fc.assert(
      fc.property(value, fc.record({ re: fc.double({ min: -50, max: 50, noNaN: true }), im: finite }), (a, e) => {
        // complex.js's square root breaks down on subnormal inputs (√(j·5e-324) gives −j∞), so the
        // comparison stays in the normal range; csqrt's own subnormal handling is checked below.
        fc.pre(Math.hypot(a.re, a.im) > 1e-100);
        const A = new Complex(a.re, a.im);
        expect(abs(a)).toBeCloseTo(A.abs(), 8);
        if (a.re !== 0 || a.im !== 0) expect(argDeg(a)).toBeCloseTo((A.arg() * 180) / Math.PI, 12);
        expect(relativeError(csqrt(a), toPlain(A.sqrt()))).toBeLessThan(1e-14);
        expect(relativeError(cexp(e), toPlain(new Complex(e.re, e.im).exp()))).toBeLessThan(1e-9);
      }),
    );
  });
});

describe('edge cases stay finite and on the principal branch', () => {
  it('gives +j2 for √−4 whatever the sign of the zero imaginary part', () => {
    expect(csqrt({ re: -4, im: 0 })).toEqual({ re: 0, im: 2 });
    expect(csqrt({ re: -4, im: -0 })).toEqual({ re: 0, im: 2 });
  });

  it('takes the square root of a subnormal number without dividing by zero', () => {
    const r = csqrt({ re: 0, im: 5e-324 });
    expect(r.re).toBeGreaterThan(0);
    // √(j·t) = √(t/2)·(1 + j); compare after scaling back into the normal range.
    const scaled = r.re * 2 ** 300;
    expect((2 * scaled * scaled) / (5e-324 * 2 ** 600)).toBeCloseTo(1, 12);
    expect(r.im / r.re).toBeCloseTo(1, 14);
  });

  it('keeps |z| finite where re² + im² would overflow', () => {
    expect(abs({ re: 3e200, im: 4e200 })).toBeCloseTo(5e200, -190);
  });

  it('divides without overflow when the divisor parts differ greatly (Smith 1962)', () => {
    const q = div({ re: 1e300, im: 1e300 }, { re: 1e300, im: 1e-300 });
    expect(q.re).toBeCloseTo(1, 15);
    expect(q.im).toBeCloseTo(1, 15);
  });
});
