import { and, eq, gt, isNull, sql } from 'drizzle-orm';
import type { Db, DbOrTx } from '../../../db/client.ts';
import { passwordResets } from '../../../db/schema.ts';

/** Stores a new reset token for the member; only the newest link works, so earlier ones are spent with it. */
export async function replaceResetToken(db: Db, reset: { userId: string; tokenHash: string; expiresAt: Date }): Promise<void> {
  await db.transaction(async (tx) => {
    await tx.update(passwordResets).set({ usedAt: sql`now()` }).where(and(eq(passwordResets.userId, reset.userId), isNull(passwordResets.usedAt)));
    await tx.insert(passwordResets).values(reset);
  });
}

/** Spends a live token (unused, not expired at `now`); the member it was for, or undefined. */
export async function spendResetToken(db: DbOrTx, tokenHash: string, now: Date): Promise<{ userId: string } | undefined> {
  const rows = await db
    .update(passwordResets)
    .set({ usedAt: sql`now()` })
    .where(and(eq(passwordResets.tokenHash, tokenHash), isNull(passwordResets.usedAt), gt(passwordResets.expiresAt, now)))
    .returning({ userId: passwordResets.userId });
  return rows[0];
}
