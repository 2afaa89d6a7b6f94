import { z } from '../../../zod.ts';

export const KEY_STATES = ['active', 'revoked', 'expired', 'owner-disabled'] as const;

/** Origins one key may list: a browser key belongs to one site and a few of its hosts. */
export const MAX_ALLOWED_ORIGINS = 20;

/**
 * `value` as the exact origin a browser sends in its `Origin` header (`scheme://host[:port]`, lower
 * case, default port left out, no path), or undefined when it names no http(s) origin at all.
 */
export function originOf(value: string): string | undefined {
  if (!URL.canParse(value)) return undefined;
  const url = new URL(value);
  return url.protocol === 'https:' || url.protocol === 'http:' ? url.origin : undefined;
}

const OriginSchema = z
  .string()
  .max(300)
  .superRefine((value, ctx) => {
    const origin = originOf(value);
    if (origin === value) return;
    ctx.addIssue({
      code: 'custom',
      message: origin
        ? `write the origin exactly as browsers send it: ${origin} (lower case, no path or trailing slash, no default port)`
        : 'an origin is scheme://host[:port] with http or https, e.g. https://log.example.org',
    });
  })
  .openapi({ example: 'https://log.example.org' });

export const AllowedOriginsSchema = z
  .array(OriginSchema)
  .max(MAX_ALLOWED_ORIGINS, `at most ${MAX_ALLOWED_ORIGINS} origins per key; issue another key for another site`)
  .refine((origins) => new Set(origins).size === origins.length, { message: 'list each origin once' })
  .openapi({
    description:
      'Exact origins (`scheme://host[:port]`) of the web pages that may call the API with this key from a browser. ' +
      'A request carrying an `Origin` header outside this list is refused with 403; an empty list allows no browser page. ' +
      'Requests without `Origin` (servers, programs) are not affected.',
    example: ['https://log.example.org'],
  });

export const MemberRefSchema = z
  .object({
    id: z.uuid(),
    email: z.string().openapi({ example: 'ines.marlow@kestrel-ridge.example' }),
    displayName: z.string().openapi({ example: 'Ines Marlow' }),
  })
  .openapi('MemberRef', { description: 'A member, as shown next to things they own.' });

export const ApiKeySchema = z
  .object({
    id: z.uuid().openapi({ example: '1b7d6f3e-2d55-4c1e-9d0a-2f3c4b5a6978' }),
    name: z.string().openapi({ example: 'Shack logger' }),
    note: z.string().openapi({ example: 'Runs on the club laptop at the ridge hut.' }),
    displayStart: z.string().openapi({ description: 'First characters of the key, to recognise it; the key itself is never shown again.', example: 'gml_Xq3v9A' }),
    owner: MemberRefSchema,
    dailyQuota: z.number().int().openapi({ description: 'Calculation units per UTC day.', example: 10000 }),
    burstPerMinute: z.number().int().openapi({ description: 'Requests per minute, whatever they cost.', example: 120 }),
    allowedOrigins: z.array(z.string()).openapi({
      description: 'Exact origins of the web pages that may use the key from a browser; empty: none (servers and programs are not affected).',
      example: [],
    }),
    usedToday: z.number().int().openapi({ description: 'Units spent so far today (UTC).', example: 42 }),
    state: z.enum(KEY_STATES).openapi({ description: '`active` keys work; the others are refused with 401.', example: 'active' }),
    expiresAt: z.string().nullable().openapi({ description: 'ISO 8601 instant after which the key is refused; null: never.', example: null }),
    revokedAt: z.string().nullable().openapi({ example: null }),
    createdAt: z.string().openapi({ example: '2026-03-14T09:30:00.000Z' }),
    createdById: z.uuid().nullable().openapi({ description: 'Member who created the key; null when created with the CLI.' }),
    lastUsedAt: z
      .string()
      .nullable()
      .openapi({
        description: 'ISO 8601 instant of the latest request made with the key; null: never used. Servers record it about once a second, so it can lag by that much.',
        example: '2026-03-14T17:59:58.000Z',
      }),
  })
  .openapi('ApiKey', { description: 'An API key without its secret.' });

export const ApiKeyListSchema = z.object({ keys: z.array(ApiKeySchema) }).openapi('ApiKeyList');

export const CreatedApiKeySchema = z
  .object({
    key: ApiKeySchema,
    secret: z.string().openapi({
      description: 'The key to send as `Authorization: Bearer <secret>`. Shown this once: only its SHA-256 hash is stored.',
      example: 'gml_Xq3v9AbCdEfGhIjKlMnOpQrStUvWxYz0123456789-_',
    }),
  })
  .openapi('CreatedApiKey');

const Quota = z.number().int().min(1).max(100_000_000).openapi({ description: 'Calculation units per UTC day (admins only).', example: 5000 });
const Burst = z.number().int().min(1).max(1_000_000).openapi({ description: 'Requests per minute (admins only).', example: 60 });

export const CreateApiKeySchema = z
  .strictObject({
    name: z.string().trim().min(1, 'give the key a name, e.g. the program that will use it').max(100).openapi({ example: 'Shack logger' }),
    note: z.string().max(500).default('').openapi({ example: 'Runs on the club laptop at the ridge hut.' }),
    expiresAt: z.iso.datetime({ offset: true, message: 'use an ISO 8601 instant such as 2026-12-31T23:59:59Z' }).optional().openapi({ example: '2026-12-31T23:59:59Z' }),
    ownerId: z.uuid().optional().openapi({ description: 'Member who will own the key (admins only; default: yourself).' }),
    dailyQuota: Quota.optional(),
    burstPerMinute: Burst.optional(),
    allowedOrigins: AllowedOriginsSchema.default([]),
  })
  .openapi('CreateApiKey', { description: 'Without quota fields the key gets the organisation defaults.' });

export const UpdateApiKeySchema = z
  .strictObject({
    name: z.string().trim().min(1).max(100).optional(),
    note: z.string().max(500).optional(),
    dailyQuota: Quota.optional(),
    burstPerMinute: Burst.optional(),
    allowedOrigins: AllowedOriginsSchema.optional(),
  })
  .refine((v) => Object.keys(v).length > 0, { message: 'send at least one of name, note, dailyQuota, burstPerMinute, allowedOrigins', params: { shape: true } })
  .openapi('UpdateApiKey');

export const KeyIdParamsSchema = z.object({ id: z.uuid({ message: 'key ids are UUIDs, as listed by GET /api/v1/keys' }) });

export const ListKeysQuerySchema = z.strictObject({
  ownerId: z.uuid().optional().openapi({ description: 'Only keys of this member (admins; developers always see only their own).' }),
});

export type ApiKeyView = z.infer<typeof ApiKeySchema>;
export type CreateApiKey = z.infer<typeof CreateApiKeySchema>;
export type UpdateApiKey = z.infer<typeof UpdateApiKeySchema>;
