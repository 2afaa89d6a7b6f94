/**
 * Formats a number for people with a fixed count of significant digits; the API keeps full
 * precision and the raw JSON beside every result shows it.
 * @example formatNumber(1.4999999, 4) // "1.500"
 */
export function formatNumber(value: number | null | undefined, digits = 4): string {
  if (value === null || value === undefined) return '—';
  if (!Number.isFinite(value)) return String(value);
  if (value === 0) return '0';
  const abs = Math.abs(value);
  if (abs >= 1e6 || abs < 1e-3) return value.toExponential(digits - 1);
  return value.toPrecision(digits);
}

/** A date-time in the reader's locale, short. */
export function formatInstant(iso: string | null | undefined): string {
  if (!iso) return '—';
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return iso;
  return d.toLocaleString(undefined, { year: 'numeric', month: 'short', day: 'numeric', hour: '2-digit', minute: '2-digit' });
}

/** Integers with thousands separators. */
export function formatCount(value: number): string {
  return value.toLocaleString(undefined, { maximumFractionDigits: 0 });
}

/** A frequency in the unit people use for it. */
export function formatFrequency(hz: number): string {
  if (hz >= 1e9) return `${formatNumber(hz / 1e9, 6)} GHz`;
  if (hz >= 1e6) return `${formatNumber(hz / 1e6, 6)} MHz`;
  if (hz >= 1e3) return `${formatNumber(hz / 1e3, 5)} kHz`;
  return `${formatNumber(hz, 5)} Hz`;
}

/** R ± jX in ohms. */
export function formatImpedance(z: { re: number; im: number } | null | undefined, digits = 4): string {
  if (!z) return '—';
  const sign = z.im < 0 ? '−' : '+';
  return `${formatNumber(z.re, digits)} ${sign} j${formatNumber(Math.abs(z.im), digits)} Ω`;
}
