import type { Complex } from './complex.ts';
import { RfInputError } from './errors.ts';

// Values normally arrive already shaped by the HTTP schemas, but the library is also called
// directly (batch jobs, sweeps), so every entry point re-checks what could turn into NaN or Infinity.

/**
 * Throws unless `value` is a finite number.
 * @example requireFinite(50, 'loadOhm')
 */
export function requireFinite(value: unknown, field: string): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new RfInputError(field, `${field} must be a finite number.`);
  }
  return value;
}

/**
 * Throws unless `value` is a finite number ≥ 0; `what` completes the sentence "… cannot be negative".
 * @example requireNonNegative(0.5, 'lengthM', 'A line length')
 */
export function requireNonNegative(value: unknown, field: string, what: string): number {
  const v = requireFinite(value, field);
  if (v < 0) throw new RfInputError(field, `${what} cannot be negative; give a value of 0 or more.`);
  return v;
}

/**
 * Throws unless `value` is a finite number > 0.
 * @example requirePositive(14.2e6, 'frequencyHz', 'The frequency')
 */
export function requirePositive(value: unknown, field: string, what: string): number {
  const v = requireFinite(value, field);
  if (v <= 0) throw new RfInputError(field, `${what} must be greater than 0.`);
  return v;
}

/**
 * Throws unless `value` is an object with finite `re` and `im`.
 * @example requireComplex({ re: 50, im: 0 }, 'loadOhm')
 */
export function requireComplex(value: unknown, field: string): Complex {
  if (typeof value !== 'object' || value === null) {
    throw new RfInputError(field, `${field} must be a complex value { re, im } with finite parts.`);
  }
  const { re, im } = value as { re?: unknown; im?: unknown };
  if (typeof re !== 'number' || !Number.isFinite(re) || typeof im !== 'number' || !Number.isFinite(im)) {
    throw new RfInputError(field, `${field} must be a complex value { re, im } with finite parts.`);
  }
  return { re, im };
}

/**
 * Throws unless `value` is a finite complex impedance with a strictly positive resistance, as a
 * characteristic or reference impedance must be for waves to carry power.
 * @example requireReferenceImpedance({ re: 50, im: 0 }, 'referenceOhm')
 */
export function requireReferenceImpedance(value: unknown, field: string): Complex {
  const z = requireComplex(value, field);
  if (z.re <= 0) {
    throw new RfInputError(
      field,
      `${field} must have a resistive part greater than 0 ohm (for example 50 or 75); a reference impedance without resistance carries no power.`,
    );
  }
  return z;
}

/**
 * Throws unless `value` is a finite complex impedance with resistance ≥ 0 (a passive load).
 * @example requirePassiveLoad({ re: 0, im: 25 }, 'loadOhm')
 */
export function requirePassiveLoad(value: unknown, field: string): Complex {
  const z = requireComplex(value, field);
  if (z.re < 0) {
    throw new RfInputError(
      field,
      `${field} has a negative resistance, which no passive load has; check the sign of the resistive part.`,
    );
  }
  return z;
}
