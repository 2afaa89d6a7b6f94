/** The range a number field accepts, as the API's schema states it. */
export interface NumberRange {
  /** Lowest accepted value, itself included. */
  min?: number;
  /** The value must be above this one (a length factor of 0 means nothing). */
  above?: number;
  max?: number;
  integer?: boolean;
}

/**
 * Why a value is refused, in words for the person typing it, or null when it is accepted. Empty is
 * not refused here: whether a field may stay empty is the form's business.
 * @example rangeRefusal(-5, { min: 1 }) // "Enter 1 or more."
 */
export function rangeRefusal(value: number | null | undefined, range: NumberRange): string | null {
  if (value === null || value === undefined) return null;
  if (!Number.isFinite(value)) return 'Enter a number.';
  if (range.integer && !Number.isInteger(value)) return 'Enter a whole number.';
  if (range.above !== undefined && value <= range.above) return `Enter more than ${range.above.toLocaleString()}.`;
  if (range.min !== undefined && value < range.min) return `Enter ${range.min.toLocaleString()} or more.`;
  if (range.max !== undefined && value > range.max) return `Enter ${range.max.toLocaleString()} or less.`;
  return null;
}

/** The API's bounds for a key's limits (CreateApiKey, UpdateApiKey). */
export const QUOTA_RANGE = { min: 1, max: 100_000_000, integer: true } as const;
export const BURST_RANGE = { min: 1, max: 1_000_000, integer: true } as const;
