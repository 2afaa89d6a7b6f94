import { PasswordSchema } from '../../../auth/password.ts';
import { z } from '../../../zod.ts';
import { RoleSchema } from '../members/members.schemas.ts';

export const InvitationSchema = z
  .object({
    id: z.uuid(),
    email: z.string().openapi({ example: 'oskar.brandt@kestrel-ridge.example' }),
    role: RoleSchema,
    state: z.enum(['pending', 'accepted', 'withdrawn', 'expired']).openapi({ example: 'pending' }),
    expiresAt: z.string().openapi({ example: '2026-03-21T09:30:00.000Z' }),
    createdAt: z.string().openapi({ example: '2026-03-14T09:30:00.000Z' }),
  })
  .openapi('Invitation');

export const CreateInvitationSchema = z
  .strictObject({
    email: z.email({ message: 'enter the address to send the invitation to' }).max(254).openapi({ example: 'oskar.brandt@kestrel-ridge.example' }),
    role: RoleSchema.default('developer'),
  })
  .openapi('CreateInvitation');

export const AcceptInvitationSchema = z
  .strictObject({
    token: z.string().min(1, 'paste the token from the invitation link').openapi({ description: 'The `token` parameter of the link in the e-mail.', example: 'Vb1sQ8mJ2yTt4nCq0rX7eWz3aKf5uGh6LpD9oN1iS2M' }),
    displayName: z
      .string()
      .trim()
      .min(1, 'enter the name other members will see')
      .max(100)
      .optional()
      .openapi({ description: 'For a new account: the name other members will see. Not used when you accept signed in.', example: 'Oskar Brandt' }),
    password: PasswordSchema.optional().openapi({ description: 'For a new account: its password, at least 12 characters; no other rules. Not used when you accept signed in.' }),
  })
  .openapi('AcceptInvitation');

export const InvitationIdParamsSchema = z.object({ id: z.uuid({ message: 'invitation ids are UUIDs, as listed by GET /api/v1/invitations' }) });

export type InvitationView = z.infer<typeof InvitationSchema>;
export type CreateInvitation = z.infer<typeof CreateInvitationSchema>;
export type AcceptInvitation = z.infer<typeof AcceptInvitationSchema>;
