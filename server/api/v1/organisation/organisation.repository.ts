import { eq, sql } from 'drizzle-orm';
import { organisations } from '../../../db/schema.ts';
import type { DbOrTx } from '../../../db/client.ts';

const organisationColumns = {
  id: organisations.id,
  name: organisations.name,
  slug: organisations.slug,
  defaultDailyQuota: organisations.defaultDailyQuota,
  defaultBurstPerMinute: organisations.defaultBurstPerMinute,
};

type DefaultLimits = { defaultDailyQuota?: number; defaultBurstPerMinute?: number };

/** The organisation with its default limits for new keys. */
export async function findOrganisation(db: DbOrTx, organisationId: string) {
  const rows = await db.select(organisationColumns).from(organisations).where(eq(organisations.id, organisationId));
  return rows[0];
}

/** What names an organisation to its members: id, name and slug. */
export async function findOrganisationSummary(db: DbOrTx, organisationId: string) {
  const rows = await db.select({ id: organisations.id, name: organisations.name, slug: organisations.slug }).from(organisations).where(eq(organisations.id, organisationId));
  return rows[0];
}

/**
 * Changes the default limits and answers the organisation before (read under a row lock, so the
 * audit shows the true "before") and after. Call it inside a transaction.
 */
export async function changeDefaultLimits(tx: DbOrTx, organisationId: string, changes: DefaultLimits) {
  const [before] = await tx.select(organisationColumns).from(organisations).where(eq(organisations.id, organisationId)).for('update');
  const [after] = await tx.update(organisations).set(changes).where(eq(organisations.id, organisationId)).returning(organisationColumns);
  return { before, after };
}

/** The organisation with this slug, created when missing (the demo seed); answers its id either way. */
export async function ensureOrganisation(db: DbOrTx, organisation: { name: string; slug: string }): Promise<string> {
  const [row] = await db
    .insert(organisations)
    .values(organisation)
    .onConflictDoUpdate({ target: organisations.slug, set: { slug: sql`excluded.slug` } })
    .returning({ id: organisations.id });
  if (!row) throw new Error(`organisation ${organisation.slug} could not be created`);
  return row.id;
}
