import { describe, expect, it } from 'vitest';
import { drawnPoints, MAX_DRAWN_POINTS } from './sweepPoints.ts';

const point = (i: number) => ({ frequencyHz: i, loadOhm: { re: 50, im: 0 }, reflection: { re: 0, im: 0, magnitude: 0, angleDeg: 0 }, swr: 1, returnLossDb: null });
const pages = (total: number, size: number) => (cursor: string) => {
  const start = Number(cursor);
  const end = Math.min(total, start + size);
  return Promise.resolve({ points: Array.from({ length: end - start }, (_, k) => point(start + k)), nextCursor: end < total ? String(end) : null });
};

describe('drawnPoints', () => {
  it('follows the cursors until the last page', async () => {
    const { points, complete } = await drawnPoints({ points: [point(0), point(1)], nextCursor: '2' }, pages(7, 2));
    expect(points.map((p) => p.frequencyHz)).toEqual([0, 1, 2, 3, 4, 5, 6]);
    expect(complete).toBe(true);
  });

  it('stops at the drawing limit and says points were left out', async () => {
    const { points, complete } = await drawnPoints({ points: [point(0)], nextCursor: '1' }, pages(100_000, 2000));
    expect(points).toHaveLength(MAX_DRAWN_POINTS);
    expect(complete).toBe(false);
  });

  it('asks for nothing more when the first page holds every point', async () => {
    const { points, complete } = await drawnPoints({ points: [point(0)], nextCursor: null }, () => Promise.reject(new Error('no more pages')));
    expect(points).toHaveLength(1);
    expect(complete).toBe(true);
  });
});
