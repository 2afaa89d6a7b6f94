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

/*
 * One precision per quantity, used on every page, so one figure reads the same wherever it appears.
 * The API keeps full precision; the JSON shown beside each result has it.
 */

/** SWR to two decimals: "1.19 : 1"; null is a total reflection. */
export function formatSwr(swr: number | null | undefined): string {
  if (swr === undefined) return '—';
  if (swr === null) return 'unbounded (total reflection)';
  return `${swr.toFixed(2)} : 1`;
}

/** A level or loss in dB to two decimals. */
export function formatDb(db: number | null | undefined): string {
  if (db === null || db === undefined) return '—';
  return `${db.toFixed(2)} dB`;
}

/** A length to the centimetre: "9.00 m", "26.00 m". */
export function formatLengthM(metres: number | null | undefined): string {
  if (metres === null || metres === undefined) return '—';
  return `${metres.toFixed(2)} m`;
}

/** A length in feet to the hundredth, as the metric one is kept to the centimetre. */
export function formatLengthFt(feet: number | null | undefined): string {
  if (feet === null || feet === undefined) return '—';
  return `${feet.toFixed(2)} ft`;
}

/**
 * A frequency in MHz with as many decimals as the sweep's step needs to tell neighbouring points
 * apart (at least three: kHz), so "14.205 MHz" in a list and on the sweep's page agree.
 * @example formatMhz(7_150_000, 25_000) // "7.150 MHz"
 */
export function formatMhz(hz: number | null | undefined, stepHz?: number): string {
  if (hz === null || hz === undefined) return '—';
  const decimals = stepHz && stepHz > 0 ? Math.min(6, Math.max(3, Math.ceil(-Math.log10(stepHz / 1e6)))) : 3;
  return `${(hz / 1e6).toFixed(decimals)} MHz`;
}

/** The step between points of a sweep, from its range and its count. */
export function sweepStepHz(summary: { startHz: number; stopHz: number; pointCount: number }): number | undefined {
  return summary.pointCount > 1 ? (summary.stopHz - summary.startHz) / (summary.pointCount - 1) : undefined;
}
