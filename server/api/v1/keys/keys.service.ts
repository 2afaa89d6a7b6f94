import type { Db } from '../../../db/client.ts';
import { generateApiKey } from '../../../auth/api-key.ts';
import { ApiError } from '../../../http/problem.ts';
import { utcDay } from '../../../quota/day.ts';
import { recordAudit, type Actor } from '../audit/audit.repository.ts';
import { findKey, findKeyOwner, insertKey, lockKeyLimits, markRevoked, updateKeyFields } from './keys.repository.ts';
import type { ApiKeyView } from './keys.schemas.ts';

export interface CreateKeyInput {
  organisationId: string;
  ownerId: string;
  name: string;
  note: string;
  expiresAt?: Date;
  dailyQuota?: number;
  burstPerMinute?: number;
  /** Exact browser origins that may use the key (validated by AllowedOriginsSchema); none by default. */
  allowedOrigins?: string[];
  actor: Actor;
}

/** Creates a key (defaults from the organisation) and its audit event in one transaction; the secret is returned once. */
export async function createKey(db: Db, input: CreateKeyInput, now: Date): Promise<{ key: ApiKeyView; secret: string }> {
  if (input.expiresAt && input.expiresAt <= now) {
    throw new ApiError('unprocessable', 'expiresAt: must be in the future; leave it out for a key that does not expire.', {
      errors: [{ field: 'expiresAt', message: 'must be in the future' }],
    });
  }
  const fresh = generateApiKey();
  const keyId = await db.transaction(async (tx) => {
    const owner = await findKeyOwner(tx, { organisationId: input.organisationId, userId: input.ownerId });
    if (!owner) throw new ApiError('notFound', 'No member with that id in your organisation; see GET /api/v1/members.');
    if (owner.disabled) throw new ApiError('conflict', 'That member is disabled; enable them (PATCH /api/v1/members/{id}) before issuing keys.');
    const id = await insertKey(tx, {
      organisationId: input.organisationId,
      userId: owner.id,
      name: input.name,
      note: input.note,
      keyHash: fresh.hash,
      displayStart: fresh.displayStart,
      dailyQuota: input.dailyQuota ?? owner.defaultDailyQuota,
      burstPerMinute: input.burstPerMinute ?? owner.defaultBurstPerMinute,
      allowedOrigins: input.allowedOrigins ?? [],
      expiresAt: input.expiresAt ?? null,
      createdBy: input.actor.userId,
    });
    await recordAudit(tx, {
      organisationId: input.organisationId,
      actor: input.actor,
      action: 'key.created',
      targetType: 'key',
      targetId: id,
      details: {
        name: input.name,
        ownerId: owner.id,
        displayStart: fresh.displayStart,
        expiresAt: input.expiresAt?.toISOString() ?? null,
        ...(input.allowedOrigins?.length ? { allowedOrigins: input.allowedOrigins } : {}),
      },
    });
    return id;
  });
  const key = await findKey(db, { organisationId: input.organisationId, keyId, now, day: utcDay(now) });
  return { key: key!, secret: fresh.key };
}

/** Revokes at once; `ownerId` limits a developer to their own keys. Unknown, foreign and already revoked keys are 404. */
export async function revokeKey(db: Db, revocation: { organisationId: string; keyId: string; ownerId?: string; actor: Actor }, now: Date): Promise<ApiKeyView> {
  const { organisationId, keyId } = revocation;
  await db.transaction(async (tx) => {
    const revoked = await markRevoked(tx, { organisationId, keyId, userId: revocation.ownerId });
    if (!revoked) throw new ApiError('notFound', 'No live key with that id among the keys you manage; GET /api/v1/keys lists them.');
    await recordAudit(tx, { organisationId, actor: revocation.actor, action: 'key.revoked', targetType: 'key', targetId: keyId });
  });
  const key = await findKey(db, { organisationId, keyId, now, day: utcDay(now) });
  return key!;
}

/**
 * Renames or re-limits a key, or changes the browser origins it serves; quota changes are audited with
 * before and after. Every process hears of the change through the key-change trigger.
 */
export async function updateKey(
  db: Db,
  update: {
    organisationId: string;
    keyId: string;
    ownerId?: string;
    actor: Actor;
    changes: Partial<{ name: string; note: string; dailyQuota: number; burstPerMinute: number; allowedOrigins: string[] }>;
  },
  now: Date,
): Promise<ApiKeyView> {
  const { organisationId, keyId, changes } = update;
  await db.transaction(async (tx) => {
    const before = await lockKeyLimits(tx, { organisationId, keyId, userId: update.ownerId });
    if (!before) throw new ApiError('notFound', 'No key with that id among the keys you manage; GET /api/v1/keys lists them.');
    await updateKeyFields(tx, { organisationId, keyId }, changes);
    const quotaChanged =
      (changes.dailyQuota !== undefined && changes.dailyQuota !== before.dailyQuota) ||
      (changes.burstPerMinute !== undefined && changes.burstPerMinute !== before.burstPerMinute);
    if (quotaChanged) {
      await recordAudit(tx, {
        organisationId,
        actor: update.actor,
        action: 'key.quota_changed',
        targetType: 'key',
        targetId: keyId,
        details: {
          before: { dailyQuota: before.dailyQuota, burstPerMinute: before.burstPerMinute },
          after: { dailyQuota: changes.dailyQuota ?? before.dailyQuota, burstPerMinute: changes.burstPerMinute ?? before.burstPerMinute },
        },
      });
    }
  });
  const key = await findKey(db, { organisationId, keyId, now, day: utcDay(now) });
  return key!;
}
