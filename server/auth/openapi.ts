import { ProblemSchema } from '../http/problem.ts';
import { registry } from '../openapi/registry.ts';
import { z } from '../zod.ts';
import { SESSION_COOKIE } from './session.ts';

registry.registerComponent('securitySchemes', 'apiKey', {
  type: 'http',
  scheme: 'bearer',
  bearerFormat: 'gml_ followed by 43 base64url characters',
  description: 'An API key sent as `Authorization: Bearer <key>`. Issue keys under /api/v1/keys (console) or with `npm run keys -- create`.',
});

registry.registerComponent('securitySchemes', 'consoleSession', {
  type: 'apiKey',
  in: 'cookie',
  name: SESSION_COOKIE,
  description:
    'The console session cookie set by POST /api/v1/session. Writes with it must also send `X-CSRF-Token` with the `csrfToken` from the sign-in answer or GET /api/v1/session.',
});

/** Routes anyone may call (health checks, sign-in, password reset, accepting an invitation): no credentials. */
export const publicAccess: Record<string, string[]>[] = [];
/** A calculation or read route: a key or the console session. */
export const keyOrSession: Record<string, string[]>[] = [{ apiKey: [] }, { consoleSession: [] }];
/** Console-only routes (managing keys, members, invitations). */
export const sessionOnly: Record<string, string[]>[] = [{ consoleSession: [] }];

const problemContent = { 'application/problem+json': { schema: ProblemSchema } };

const retryAfter = z.string().openapi({ description: 'Seconds to wait before trying again.', example: '3600' });

/** Problem responses of authenticated routes, to spread into `responses`. */
export const authProblems = {
  unauthenticated: {
    401: {
      description: 'No valid key or session. Missing, malformed, unknown, revoked and expired keys, and keys of disabled members, all look the same.',
      content: problemContent,
    },
  },
  forbidden: { 403: { description: 'Signed in, but your role does not allow this, or a console write lacks its X-CSRF-Token.', content: problemContent } },
  conflict: { 409: { description: 'The change conflicts with the current state (the detail says which).', content: problemContent } },
  tooManyRequests: {
    429: {
      description: 'The per-minute burst limit or the daily quota is spent. Wait `Retry-After` seconds.',
      headers: z.object({ 'Retry-After': retryAfter }),
      content: problemContent,
    },
  },
} as const;
