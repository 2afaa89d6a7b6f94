const INV_PHI = (Math.sqrt(5) - 1) / 2;

/**
 * Golden-section search for the maximum of f on [lo, hi], where f is unimodal (callers bracket it by
 * sampling first); stops when the bracket is narrower than `tol`. A tie between the two probes keeps
 * the lower part.
 * @example goldenMax((x) => -(x - 1) ** 2, 0, 3, 1e-9).at // ≈ 1
 */
export function goldenMax(f: (d: number) => number, lo: number, hi: number, tol: number): { at: number; value: number } {
  let a = lo;
  let b = hi;
  let c = b - INV_PHI * (b - a);
  let d = a + INV_PHI * (b - a);
  let fc = f(c);
  let fd = f(d);
  while (b - a > tol) {
    if (fc >= fd) {
      b = d;
      d = c;
      fd = fc;
      c = b - INV_PHI * (b - a);
      fc = f(c);
    } else {
      a = c;
      c = d;
      fc = fd;
      d = a + INV_PHI * (b - a);
      fd = f(d);
    }
  }
  const at = (a + b) / 2;
  return { at, value: f(at) };
}
