import { hash } from '@node-rs/argon2';
import { sql } from 'drizzle-orm';
import type { Db } from './client.ts';
import { organisations, users } from './schema.ts';

/** The invented demo scenario: a small club station on a windy ridge. */
export const DEMO_ORGANISATION = { name: 'Kestrel Ridge Radio Club', slug: 'kestrel-ridge' } as const;

/**
 * Creates the demo organisation and its admin when missing; leaves existing data alone, so a second
 * `npm start` keeps whatever the user changed. Never called in production mode.
 */
export async function seedDemo(db: Db, admin: { email: string; password: string }): Promise<{ organisationId: string; adminId: string }> {
  return db.transaction(async (tx) => {
    const [org] = await tx
      .insert(organisations)
      .values(DEMO_ORGANISATION)
      .onConflictDoUpdate({ target: organisations.slug, set: { slug: sql`excluded.slug` } })
      .returning({ id: organisations.id });
    if (!org) throw new Error('demo organisation could not be created');
    const email = admin.email.toLowerCase();
    const existing = await tx.select({ id: users.id }).from(users).where(sql`lower(${users.email}) = ${email}`);
    if (existing[0]) return { organisationId: org.id, adminId: existing[0].id };
    const [created] = await tx
      .insert(users)
      .values({ organisationId: org.id, email, displayName: 'Demo Admin', role: 'admin', passwordHash: await hash(admin.password) })
      .returning({ id: users.id });
    if (!created) throw new Error('demo admin could not be created');
    return { organisationId: org.id, adminId: created.id };
  });
}
