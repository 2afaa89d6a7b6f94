/**
 * Speed of light in vacuum, exact by the SI definition of the metre (BIPM SI Brochure, 9th ed.).
 * @example SPEED_OF_LIGHT_M_PER_S / 14.2e6 // free-space wavelength in metres at 14.2 MHz
 */
export const SPEED_OF_LIGHT_M_PER_S = 299_792_458;

/**
 * Metres per international foot, exact by the 1959 international yard and pound agreement.
 * @example 100 * M_PER_FT // 30.48
 */
export const M_PER_FT = 0.3048;

/**
 * Decibels per neper for field (voltage) quantities: 20/ln 10 ≈ 8.686 (IEC 60027-3).
 * @example 0.1 * DB_PER_NEPER // 0.8686 dB
 */
export const DB_PER_NEPER = 20 / Math.LN10;
