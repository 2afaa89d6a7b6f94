import { sql } from 'drizzle-orm';
import { boolean, index, pgEnum, pgTable, text, timestamp, uniqueIndex, uuid } from 'drizzle-orm/pg-core';

/** What a member may do: admins manage members, invitations, every key and quotas; developers their own keys. */
export const memberRole = pgEnum('member_role', ['admin', 'developer']);

export const organisations = pgTable('organisations', {
  id: uuid('id').primaryKey().defaultRandom(),
  /** Display name chosen by the organisation. */
  name: text('name').notNull(),
  /** URL-safe unique handle, used in logs and the CLI. */
  slug: text('slug').notNull().unique(),
  /** When the organisation was created. */
  createdAt: timestamp('created_at', { withTimezone: true }).notNull().defaultNow(),
});

export const users = pgTable(
  'users',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    /** The organisation this member belongs to; every owned query filters on it. */
    organisationId: uuid('organisation_id')
      .notNull()
      .references(() => organisations.id, { onDelete: 'cascade' }),
    /** Sign-in address, stored lower-cased so that look-ups are case-insensitive. */
    email: text('email').notNull(),
    /** Name shown in the console and in e-mails. */
    displayName: text('display_name').notNull(),
    /** argon2id hash of the password (PHC string); never selected by list queries or returned. */
    passwordHash: text('password_hash'),
    /** What the member may do in their organisation. */
    role: memberRole('role').notNull().default('developer'),
    /** A disabled member cannot sign in and their keys stop working. */
    disabled: boolean('disabled').notNull().default(false),
    /** When the member was created. */
    createdAt: timestamp('created_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [uniqueIndex('users_email_unique').on(sql`lower(${t.email})`), index('users_organisation_idx').on(t.organisationId)],
);
