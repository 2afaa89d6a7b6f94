import { z } from 'zod';
import { CableSchema } from './calculations.ts';

/** Every account-defined cable id starts with this; no catalog id does, so the two never collide. */
export const ACCOUNT_CABLE_PREFIX = 'account-';

const ACCOUNT_CABLE_ID = /^account-[a-z0-9]+(?:-[a-z0-9]+)*$/;

/** A Cable plus where it comes from; an intersection so that clients typed against `Cable` keep working. */
export const CableEntrySchema = z
  .intersection(
    CableSchema,
    z.object({
      origin: z.enum(['catalog', 'account']).meta({ description: '`catalog`: built in, the same for everyone. `account`: defined by an admin of your organisation.' }),
      updatedAt: z.string().optional().meta({ description: 'When an account cable was last changed.' }),
    }),
  )
  .meta({ id: 'CableEntry', description: 'A cable usable wherever a `cableId` is accepted.' });

export const CableListSchema = z
  .object({ cables: z.array(CableEntrySchema).meta({ description: 'The catalog first, then your organisation\'s cables by id.' }) })
  .meta({ id: 'CableList' });

const AttenuationInputSchema = z
  .discriminatedUnion('kind', [
    z
      .strictObject({
        kind: z.literal('k1k2'),
        k1: z.number().min(0).max(1000).meta({ description: 'dB/100 m per √MHz (conductor loss).' }),
        k2: z.number().min(0).max(1000).meta({ description: 'dB/100 m per MHz (dielectric loss).' }),
      })
      .meta({ description: 'loss dB/100 m = k1·√f + k2·f with f in MHz.' }),
    z
      .strictObject({
        kind: z.literal('table'),
        points: z
          .array(z.strictObject({ frequencyHz: z.number().positive(), lossDbPer100m: z.number().positive().max(1e4) }))
          .min(1)
          .max(200)
          .superRefine((points, ctx) => {
            for (let i = 1; i < points.length; i++) {
              if (points[i]!.frequencyHz <= points[i - 1]!.frequencyHz) {
                ctx.addIssue({ code: 'custom', path: [i, 'frequencyHz'], message: 'list the points by increasing frequency, without repeats' });
              }
            }
          }),
      })
      .meta({ description: 'Measured or datasheet points (loss > 0); log–log interpolation between them.' }),
  ])
  .meta({ id: 'AttenuationInput', example: { kind: 'k1k2', k1: 0.62, k2: 0.0031 } });

const cableFields = {
  designation: z.string().trim().min(1).max(100).meta({ description: 'What people call the cable, e.g. the reel label.', example: 'Ridge reel, low-loss 50 ohm' }),
  impedanceOhm: z.number().positive().max(10_000).meta({ description: 'Nominal characteristic impedance in ohms.', example: 50 }),
  velocityFactor: z.number().gt(0).max(1).meta({ description: 'Velocity factor, 0 < VF ≤ 1.', example: 0.85 }),
  attenuation: AttenuationInputSchema,
  maxVoltageRmsV: z.number().positive().nullable().meta({ description: 'RMS voltage rating; `null` when unknown (no voltage caution is given then).', example: 2500 }),
  source: z.string().trim().min(1).max(500).meta({ description: 'Where the figures come from (datasheet, own measurement).', example: 'Club measurement with a return-loss bridge, March 2026' }),
  notes: z.string().max(2000).meta({ description: 'Free text.' }),
};

export const CreateAccountCableSchema = z
  .strictObject({
    id: z
      .string()
      .regex(ACCOUNT_CABLE_ID, { message: 'account cable ids look like "account-ridge-reel": "account-" then lower-case letters, digits and single hyphens' })
      .max(100)
      .optional()
      .meta({ description: 'The id requests will use as `cableId`; must start with `account-`. Default: made from the designation.', example: 'account-ridge-reel' }),
    ...cableFields,
    maxVoltageRmsV: cableFields.maxVoltageRmsV.default(null),
    notes: cableFields.notes.default(''),
  })
  .meta({
    id: 'CreateAccountCable',
    example: {
      id: 'account-ridge-reel',
      designation: 'Ridge reel, low-loss 50 ohm',
      impedanceOhm: 50,
      velocityFactor: 0.85,
      attenuation: { kind: 'k1k2', k1: 0.62, k2: 0.0031 },
      maxVoltageRmsV: 2500,
      source: 'Club measurement with a return-loss bridge, March 2026',
    },
  });

export const UpdateAccountCableSchema = z
  .strictObject({
    designation: cableFields.designation.optional(),
    impedanceOhm: cableFields.impedanceOhm.optional(),
    velocityFactor: cableFields.velocityFactor.optional(),
    attenuation: AttenuationInputSchema.optional(),
    maxVoltageRmsV: cableFields.maxVoltageRmsV.optional(),
    source: cableFields.source.optional(),
    notes: cableFields.notes.optional(),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'send at least one field to change', params: { shape: true } })
  .meta({ id: 'UpdateAccountCable', description: 'The id cannot change (feed lines refer to it).', example: { velocityFactor: 0.84 } });

export const AccountCableIdParamsSchema = z.object({
  id: z.string().regex(ACCOUNT_CABLE_ID, { message: 'only account cables (ids starting with "account-") can be changed or removed; catalog cables are built in' }),
});

/** Lower-case kebab form of a designation, for a default account cable id. */
export function accountCableIdFrom(designation: string): string {
  const slug = designation
    .normalize('NFKD')
    .toLowerCase()
    .replace(/[^a-z0-9]+/g, '-')
    .replace(/^-+|-+$/g, '')
    .slice(0, 80)
    .replace(/-+$/g, '');
  return `${ACCOUNT_CABLE_PREFIX}${slug || 'cable'}`;
}
