import { and, eq, sql } from 'drizzle-orm';
import type { Db } from '../../../db/client.ts';
import { organisations, users } from '../../../db/schema.ts';
import { generateApiKey } from '../../../auth/api-key.ts';
import { ApiError } from '../../../http/problem.ts';
import { utcDay } from '../../../quota/day.ts';
import { recordAudit, type Actor } from '../audit/audit.repository.ts';
import { findKey, insertKey, lockKeyLimits, markRevoked, updateKeyFields } from './keys.repository.ts';
import type { ApiKeyView } from './keys.schemas.ts';

export interface CreateKeyInput {
  organisationId: string;
  ownerId: string;
  name: string;
  note: string;
  expiresAt?: Date;
  dailyQuota?: number;
  burstPerMinute?: number;
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
    const owners = await tx
      .select({ id: users.id, disabled: users.disabled, defaultDailyQuota: organisations.defaultDailyQuota, defaultBurstPerMinute: organisations.defaultBurstPerMinute })
      .from(users)
      .innerJoin(organisations, eq(organisations.id, users.organisationId))
      .where(and(eq(users.id, input.ownerId), eq(users.organisationId, input.organisationId)));
    const owner = owners[0];
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
      expiresAt: input.expiresAt ?? null,
      createdBy: input.actor.userId,
    });
    await recordAudit(tx, {
      organisationId: input.organisationId,
      actor: input.actor,
      action: 'key.created',
      targetType: 'key',
      targetId: id,
      details: { name: input.name, ownerId: owner.id, displayStart: fresh.displayStart, expiresAt: input.expiresAt?.toISOString() ?? null },
    });
    return id;
  });
  const key = await findKey(db, { organisationId: input.organisationId, keyId, now, day: utcDay(now) });
  return { key: key!, secret: fresh.key };
}

/** Revokes at once; `ownerId` limits a developer to their own keys. Unknown, foreign and already revoked keys are 404. */
export async function revokeKey(db: Db, q: { organisationId: string; keyId: string; ownerId?: string; actor: Actor }, now: Date): Promise<ApiKeyView> {
  await db.transaction(async (tx) => {
    const revoked = await markRevoked(tx, { organisationId: q.organisationId, keyId: q.keyId, userId: q.ownerId });
    if (!revoked) throw new ApiError('notFound', 'No live key with that id among the keys you manage; GET /api/v1/keys lists them.');
    await recordAudit(tx, { organisationId: q.organisationId, actor: q.actor, action: 'key.revoked', targetType: 'key', targetId: q.keyId });
  });
  const key = await findKey(db, { organisationId: q.organisationId, keyId: q.keyId, now, day: utcDay(now) });
  return key!;
}

/** Renames or re-limits a key; quota changes are audited with before and after. */
export async function updateKey(
  db: Db,
  q: { organisationId: string; keyId: string; ownerId?: string; actor: Actor; changes: Partial<{ name: string; note: string; dailyQuota: number; burstPerMinute: number }> },
  now: Date,
): Promise<ApiKeyView> {
  await db.transaction(async (tx) => {
    const before = await lockKeyLimits(tx, { organisationId: q.organisationId, keyId: q.keyId, userId: q.ownerId });
    if (!before) throw new ApiError('notFound', 'No key with that id among the keys you manage; GET /api/v1/keys lists them.');
    await updateKeyFields(tx, { organisationId: q.organisationId, keyId: q.keyId }, q.changes);
    const quotaChanged =
      (q.changes.dailyQuota !== undefined && q.changes.dailyQuota !== before.dailyQuota) ||
      (q.changes.burstPerMinute !== undefined && q.changes.burstPerMinute !== before.burstPerMinute);
    if (quotaChanged) {
      await recordAudit(tx, {
        organisationId: q.organisationId,
        actor: q.actor,
        action: 'key.quota_changed',
        targetType: 'key',
        targetId: q.keyId,
        details: {
          before: { dailyQuota: before.dailyQuota, burstPerMinute: before.burstPerMinute },
          after: { dailyQuota: q.changes.dailyQuota ?? before.dailyQuota, burstPerMinute: q.changes.burstPerMinute ?? before.burstPerMinute },
        },
      });
    }
  });
  const key = await findKey(db, { organisationId: q.organisationId, keyId: q.keyId, now, day: utcDay(now) });
  return key!;
}

/** For the CLI: the member with this address (any organisation), or undefined. */
export async function findMemberByEmail(db: Db, email: string) {
  const rows = await db
    .select({ id: users.id, organisationId: users.organisationId, email: users.email, disabled: users.disabled })
    .from(users)
    .where(sql`lower(${users.email}) = ${email.toLowerCase()}`);
  return rows[0];
}
