/** Quotas count per UTC calendar day; these helpers keep that rule in one place. */

export const SECONDS_PER_DAY = 86_400;

/** `YYYY-MM-DD` of the UTC day containing `at`. */
export function utcDay(at: Date): string {
  const t = at.getTime();
  // Every metered request asks; the answer only changes at midnight.
  if (t >= lastDay.start && t < lastDay.end) return lastDay.day;
  const start = Date.UTC(at.getUTCFullYear(), at.getUTCMonth(), at.getUTCDate());
  lastDay = { start, end: start + SECONDS_PER_DAY * 1000, day: at.toISOString().slice(0, 10) };
  return lastDay.day;
}

let lastDay = { start: 0, end: 0, day: '' };

/** Whole seconds from `at` to the next 00:00 UTC (at least 1), for `Retry-After`. */
export function secondsUntilUtcMidnight(at: Date): number {
  const t = at.getTime();
  const next = t >= lastDay.start && t < lastDay.end ? lastDay.end : Date.UTC(at.getUTCFullYear(), at.getUTCMonth(), at.getUTCDate() + 1);
  return Math.max(1, Math.ceil((next - t) / 1000));
}

