import type { Schemas } from '../../api/client.ts';

type Point = Schemas['AnalysedPoint'];
type Page = { points: Point[]; nextCursor: string | null };

/** A sweep as the console shows it: the API's answer with the points of every page it drew. */
export type DrawnSweep = Schemas['Sweep'] & { points: Point[] };

/** The console draws at most this many points; a larger sweep is drawn from its start and the CSV has the rest. */
export const MAX_DRAWN_POINTS = 20_000;

/**
 * The sweep's points for the charts: its first page, then the following pages (`fetchPage(cursor)`)
 * until the last one or MAX_DRAWN_POINTS. `complete` is false when points were left out.
 */
export async function drawnPoints(first: Page, fetchPage: (cursor: string) => Promise<Page>): Promise<{ points: Point[]; complete: boolean }> {
  const points = [...first.points];
  let cursor = first.nextCursor;
  while (cursor !== null && points.length < MAX_DRAWN_POINTS) {
    const page = await fetchPage(cursor);
    points.push(...page.points);
    cursor = page.nextCursor;
  }
  if (points.length > MAX_DRAWN_POINTS) points.length = MAX_DRAWN_POINTS;
  return { points, complete: cursor === null && points.length <= MAX_DRAWN_POINTS };
}
