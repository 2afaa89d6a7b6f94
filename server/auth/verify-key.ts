import { eq } from 'drizzle-orm';
import type { Db } from '../db/client.ts';
import { apiKeys, organisations, users } from '../db/schema.ts';
import { hashApiKey, looksLikeApiKey } from './api-key.ts';

export interface VerifiedKey {
  keyId: string;
  name: string;
  displayStart: string;
  organisationId: string;
  userId: string;
  ownerEmail: string;
  role: 'admin' | 'developer';
  dailyQuota: number;
  burstPerMinute: number;
  /** Kept so that a cached verification stops working the moment the key expires. */
  expiresAt: Date | null;
  /** The browser origins whose pages may use the key (exact `Origin` values); read with the key, so a browser call costs no lookup. */
  allowedOrigins: ReadonlySet<string>;
}

/** Most keys serve no browser page: they share one empty set. */
const NO_ORIGINS: ReadonlySet<string> = new Set();

/** The closed set of outcomes; callers only ever learn "valid" or "not valid". */
export type KeyVerification =
  | { outcome: 'valid'; key: VerifiedKey }
  | { outcome: 'malformed' | 'unknown' | 'revoked' | 'expired' | 'owner-disabled' };

/** Checks a presented key: format first (no lookup for junk), then one indexed lookup by hash. */
export async function verifyApiKey(db: Db, presented: string, now: Date): Promise<KeyVerification> {
  if (!looksLikeApiKey(presented)) return { outcome: 'malformed' };
  return verifyApiKeyHash(db, hashApiKey(presented), now);
}

/** The lookup part of verifyApiKey, for callers that already hashed a well-formed key. */
export async function verifyApiKeyHash(db: Db, keyHash: string, now: Date): Promise<KeyVerification> {
  const rows = await db
    .select({
      keyId: apiKeys.id,
      name: apiKeys.name,
      displayStart: apiKeys.displayStart,
      organisationId: apiKeys.organisationId,
      userId: apiKeys.userId,
      dailyQuota: apiKeys.dailyQuota,
      burstPerMinute: apiKeys.burstPerMinute,
      expiresAt: apiKeys.expiresAt,
      allowedOrigins: apiKeys.allowedOrigins,
      revokedAt: apiKeys.revokedAt,
      ownerEmail: users.email,
      role: users.role,
      disabled: users.disabled,
      ownerOrganisationId: users.organisationId,
    })
    .from(apiKeys)
    .innerJoin(users, eq(users.id, apiKeys.userId))
    .innerJoin(organisations, eq(organisations.id, apiKeys.organisationId))
    .where(eq(apiKeys.keyHash, keyHash));
  const row = rows[0];
  // A key whose owner moved to another organisation is treated as unknown, never as the other organisation's.
  if (!row || row.ownerOrganisationId !== row.organisationId) return { outcome: 'unknown' };
  if (row.revokedAt) return { outcome: 'revoked' };
  if (row.expiresAt && row.expiresAt <= now) return { outcome: 'expired' };
  if (row.disabled) return { outcome: 'owner-disabled' };
  return {
    outcome: 'valid',
    key: {
      keyId: row.keyId,
      name: row.name,
      displayStart: row.displayStart,
      organisationId: row.organisationId,
      userId: row.userId,
      ownerEmail: row.ownerEmail,
      role: row.role,
      dailyQuota: row.dailyQuota,
      burstPerMinute: row.burstPerMinute,
      expiresAt: row.expiresAt,
      allowedOrigins: row.allowedOrigins.length > 0 ? new Set(row.allowedOrigins) : NO_ORIGINS,
    },
  };
}
