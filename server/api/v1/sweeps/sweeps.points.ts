import type { SweepPointInput } from '../../../../shared/sweep/points.ts';

// Three little-endian float64 per point: frequency Hz, R ohm, X ohm (NaN, NaN for an open circuit).
// Exact doubles, about a third of the size of the same points as JSON, and no parsing to read them.
const DOUBLES_PER_POINT = 3;
const BYTES_PER_POINT = DOUBLES_PER_POINT * 8;

/** Packs points for the `sweeps.*_points` bytea columns. */
export function packPoints(points: readonly SweepPointInput[]): Buffer {
  const buffer = Buffer.allocUnsafe(points.length * BYTES_PER_POINT);
  let offset = 0;
  for (const p of points) {
    buffer.writeDoubleLE(p.frequencyHz, offset);
    buffer.writeDoubleLE(p.loadOhm === null ? NaN : p.loadOhm.re, offset + 8);
    buffer.writeDoubleLE(p.loadOhm === null ? NaN : p.loadOhm.im, offset + 16);
    offset += BYTES_PER_POINT;
  }
  return buffer;
}

/** The inverse of packPoints. */
export function unpackPoints(buffer: Buffer): SweepPointInput[] {
  if (buffer.length % BYTES_PER_POINT !== 0) throw new Error(`packed sweep points have ${buffer.length} bytes, not a multiple of ${BYTES_PER_POINT}`);
  const n = buffer.length / BYTES_PER_POINT;
  const points = new Array<SweepPointInput>(n);
  for (let i = 0, offset = 0; i < n; i++, offset += BYTES_PER_POINT) {
    const re = buffer.readDoubleLE(offset + 8);
    const im = buffer.readDoubleLE(offset + 16);
    points[i] = { frequencyHz: buffer.readDoubleLE(offset), loadOhm: Number.isNaN(re) ? null : { re, im } };
  }
  return points;
}
