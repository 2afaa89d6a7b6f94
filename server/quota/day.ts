/** Quotas count per UTC calendar day; these helpers keep that rule in one place. */

/** `YYYY-MM-DD` of the UTC day containing `at`. */
export function utcDay(at: Date): string {
  return at.toISOString().slice(0, 10);
}

/** Whole seconds from `at` to the next 00:00 UTC (at least 1), for `Retry-After`. */
export function secondsUntilUtcMidnight(at: Date): number {
  const next = Date.UTC(at.getUTCFullYear(), at.getUTCMonth(), at.getUTCDate() + 1);
  return Math.max(1, Math.ceil((next - at.getTime()) / 1000));
}

export const SECONDS_PER_DAY = 86_400;
