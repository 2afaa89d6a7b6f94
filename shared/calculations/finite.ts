/**
 * A result that overflowed double precision. JSON would silently turn such a number into null, so
 * the server answers a 422 problem with this message instead (server/http/error-middleware.ts).
 */
export class NonFiniteResultError extends Error {
  constructor() {
    super('The inputs lead to a result outside double-precision range; check their units and magnitudes.');
    this.name = 'NonFiniteResultError';
  }
}

/** Refuses to send a number that overflowed: JSON would silently turn it into null. */
export function assertFinite<T>(value: T): T {
  if (!allFinite(value)) throw new NonFiniteResultError();
  return value;
}

// Results are a few levels deep: plain recursion with for…in allocates nothing per object.
function allFinite(v: unknown): boolean {
  if (typeof v === 'number') return Number.isFinite(v);
  if (v === null || typeof v !== 'object') return true;
  if (Array.isArray(v)) {
    for (let i = 0; i < v.length; i++) if (!allFinite(v[i])) return false;
    return true;
  }
  const o = v as Record<string, unknown>;
  for (const k in o) if (!allFinite(o[k])) return false;
  return true;
}
