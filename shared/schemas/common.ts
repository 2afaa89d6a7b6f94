import { z } from 'zod';

/** A complex quantity as `{ re, im }` (impedances in ohms, reflection coefficients dimensionless). */
export const ComplexSchema = z
  .strictObject({
    re: z.number().meta({ description: 'Real part.' }),
    im: z.number().meta({ description: 'Imaginary part.' }),
  })
  .meta({ id: 'Complex', description: 'A complex value as `{ re, im }`.', example: { re: 36.5, im: -12.2 } });

/** An impedance in ohms: a plain number when purely resistive, else `{ re, im }`. */
export const ImpedanceSchema = z
  .union([z.number(), ComplexSchema], { error: 'give the impedance in ohms as a number (resistive) or as { "re": R, "im": X }' })
  .meta({ id: 'Impedance', description: 'Impedance in ohms: a plain number when purely resistive, or `{ re, im }` (R + jX).', example: { re: 72, im: 18 } });

export type ComplexInput = z.infer<typeof ComplexSchema>;
export type ImpedanceInput = z.infer<typeof ImpedanceSchema>;

/** Accepts the two impedance forms and returns the `{ re, im }` form the domain library uses. */
export function toComplex(value: ImpedanceInput): ComplexInput {
  return typeof value === 'number' ? { re: value, im: 0 } : value;
}

export const ReflectionDetailSchema = z
  .object({
    re: z.number(),
    im: z.number(),
    magnitude: z.number().meta({ description: '|Γ|.' }),
    angleDeg: z.number().meta({ description: 'Angle of Γ in degrees, (−180, 180].' }),
  })
  .meta({ id: 'ReflectionDetail', description: 'A reflection coefficient with its magnitude and angle.' });

/** SWR is unbounded at total reflection: the API answers `null` there, never a fake large number. */
export const SwrOutput = z.number().nullable().meta({ description: 'Standing-wave ratio; `null` at total reflection (|Γ| = 1), where it is unbounded.', example: 1.5 });
export const ReturnLossOutput = z.number().nullable().meta({ description: 'Return loss in dB; `null` for a perfect match (Γ = 0), where it is unbounded.', example: 13.979400086720377 });
export const MismatchLossOutput = z.number().nullable().meta({ description: 'Mismatch loss in dB; `null` at total reflection, where it is unbounded.', example: 0.17728766960431616 });

export const FrequencyHz = z.number().positive().meta({ description: 'Frequency in hertz (> 0).', example: 14_200_000 });
export const PowerW = z.number().min(0).meta({ description: 'Power in watts (≥ 0).', example: 100 });
