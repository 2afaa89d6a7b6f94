import { authProblems } from '../auth/openapi.ts';
import { z } from '../zod.ts';

/**
 * Header fields of a metered response (IETF draft-ietf-httpapi-ratelimit-headers): one `"burst"` item
 * (per minute) and, for keys, one `"daily"` item (UTC day).
 */
export const rateLimitHeaders = z.object({
  'RateLimit-Policy': z.string().openapi({ description: 'The limits that apply.', example: '"burst"; q=120; w=60; pk=:ZmY3MmE2:, "daily"; q=10000; w=86400' }),
  RateLimit: z.string().openapi({ description: 'What remains of each limit (`r`) and seconds until it resets (`t`).', example: '"burst"; r=119; t=60, "daily"; r=9958; t=40210' }),
});

/** For calculation routes: spread into `responses` next to the route's own. */
export const meteredProblems = { ...authProblems.unauthenticated, ...authProblems.forbidden, ...authProblems.tooManyRequests };
