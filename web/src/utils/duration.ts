/**
 * Formats a duration in seconds for people, largest two units only: "3 d 4 h", "12 min 5 s".
 * @example formatDuration(3725) // "1 h 2 min"
 */
export function formatDuration(totalS: number): string {
  if (!Number.isFinite(totalS) || totalS < 0) return 'unknown';
  const s = Math.floor(totalS);
  const units: ReadonlyArray<readonly [string, number]> = [
    ['d', 86_400],
    ['h', 3_600],
    ['min', 60],
    ['s', 1],
  ];
  const parts: string[] = [];
  let rest = s;
  for (const [label, size] of units) {
    const count = Math.floor(rest / size);
    rest -= count * size;
    if (count > 0 || (parts.length > 0 && parts.length < 2)) parts.push(`${count} ${label}`);
    if (parts.length === 2) break;
  }
  return parts.length > 0 ? parts.join(' ') : '0 s';
}
