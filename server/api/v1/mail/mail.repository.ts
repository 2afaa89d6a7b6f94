import { and, desc, eq, sql } from 'drizzle-orm';
import type { Db } from '../../../db/client.ts';
import { capturedMail } from '../../../db/schema.ts';

/** Captured messages sent for one organisation, newest first, optionally only those to one address (any case). */
export async function listCapturedMail(db: Db, filter: { organisationId: string; to?: string; limit: number }) {
  const own = eq(capturedMail.organisationId, filter.organisationId);
  return db
    .select({ id: capturedMail.id, from: capturedMail.envelopeFrom, to: capturedMail.envelopeTo, subject: capturedMail.subject, receivedAt: capturedMail.receivedAt })
    .from(capturedMail)
    .where(filter.to ? and(own, sql`${filter.to.toLowerCase()} = any (select lower(x) from unnest(${capturedMail.envelopeTo}) as x)`) : own)
    .orderBy(desc(capturedMail.receivedAt), desc(capturedMail.id))
    .limit(filter.limit);
}

/** One captured message of the organisation; undefined for another organisation's or an unknown one. */
export async function findCapturedMail(db: Db, scope: { organisationId: string; id: string }) {
  const rows = await db
    .select()
    .from(capturedMail)
    .where(and(eq(capturedMail.id, scope.id), eq(capturedMail.organisationId, scope.organisationId)));
  return rows[0];
}
