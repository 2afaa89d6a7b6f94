import { z } from '../../../zod.ts';

export const RoleSchema = z.enum(['admin', 'developer']).openapi('Role', {
  description: '`admin`: members, invitations, every key and quotas. `developer`: own keys, own usage, calculations from the console.',
  example: 'developer',
});

export const MemberSchema = z
  .object({
    id: z.uuid(),
    email: z.string().openapi({ example: 'ines.marlow@kestrel-ridge.example' }),
    displayName: z.string().openapi({ example: 'Ines Marlow' }),
    role: RoleSchema,
    disabled: z.boolean().openapi({ description: 'A disabled member cannot sign in and their keys stop working.', example: false }),
    createdAt: z.string().openapi({ example: '2026-03-14T09:30:00.000Z' }),
  })
  .openapi('Member');

export const MemberListSchema = z.object({ members: z.array(MemberSchema) }).openapi('MemberList');

export const UpdateMemberSchema = z
  .strictObject({
    role: RoleSchema.optional(),
    disabled: z.boolean().optional(),
    displayName: z.string().trim().min(1).max(100).optional(),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'send at least one of role, disabled, displayName', params: { shape: true } })
  .openapi('UpdateMember', { description: 'Role and disabled changes are audited. You cannot change your own role or disable yourself.' });

export const MemberIdParamsSchema = z.object({ id: z.uuid({ message: 'member ids are UUIDs, as listed by GET /api/v1/members' }) });

export type MemberView = z.infer<typeof MemberSchema>;
export type UpdateMember = z.infer<typeof UpdateMemberSchema>;
