import { z } from '../../../zod.ts';
import { MemberSchema } from '../members/members.schemas.ts';

export const SignInSchema = z
  .strictObject({
    email: z.email({ message: 'enter the e-mail address you were invited with' }).max(254).openapi({ example: 'admin@kestrel-ridge.example' }),
    password: z.string().min(1, 'enter your password').max(256).openapi({ example: 'gammaline-demo-2026' }),
  })
  .openapi('SignIn');

export const SessionSchema = z
  .object({
    member: MemberSchema,
    organisation: z.object({ id: z.uuid(), name: z.string().openapi({ example: 'Kestrel Ridge Radio Club' }), slug: z.string().openapi({ example: 'kestrel-ridge' }) }),
    csrfToken: z.string().openapi({ description: 'Send as `X-CSRF-Token` on every console write (POST, PATCH, DELETE) with this session.', example: 'q0bT1x7m4f0Hk2cZr8w3VYd6sNn5pAeJ1uLgQ9iK2oE' }),
  })
  .openapi('Session');
