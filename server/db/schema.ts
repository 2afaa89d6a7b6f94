import { sql } from 'drizzle-orm';
import { boolean, date, index, integer, json, jsonb, pgEnum, pgTable, primaryKey, text, timestamp, uniqueIndex, uuid, varchar } from 'drizzle-orm/pg-core';

/** What a member may do: admins manage members, invitations, every key and quotas; developers their own keys. */
export const memberRole = pgEnum('member_role', ['admin', 'developer']);

export const organisations = pgTable('organisations', {
  id: uuid('id').primaryKey().defaultRandom(),
  /** Display name chosen by the organisation. */
  name: text('name').notNull(),
  /** URL-safe unique handle, used in logs and the CLI. */
  slug: text('slug').notNull().unique(),
  /** Calculation units per UTC day a new key gets unless an admin sets its own quota. */
  defaultDailyQuota: integer('default_daily_quota').notNull().default(10_000),
  /** Requests per minute a new key (and each member's console) may make unless set per key. */
  defaultBurstPerMinute: integer('default_burst_per_minute').notNull().default(120),
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

export const apiKeys = pgTable(
  'api_keys',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    /** Owning organisation; repeated from the owner so that every owned query can filter on it directly. */
    organisationId: uuid('organisation_id')
      .notNull()
      .references(() => organisations.id, { onDelete: 'cascade' }),
    /** The member the key acts as; a disabled owner makes the key stop working. */
    userId: uuid('user_id')
      .notNull()
      .references(() => users.id, { onDelete: 'cascade' }),
    /** Name the owner chose, e.g. the program that uses the key. */
    name: text('name').notNull(),
    /** Free text for whatever the owner wants to remember about the key. */
    note: text('note').notNull().default(''),
    /** SHA-256 of the whole key (hex); the plaintext is shown once and never stored. */
    keyHash: text('key_hash').notNull(),
    /** The first characters of the key, enough for a person to recognise it in a list. */
    displayStart: text('display_start').notNull(),
    /** Calculation units the key may spend per UTC day. */
    dailyQuota: integer('daily_quota').notNull(),
    /** Requests the key may make per minute, whatever they cost. */
    burstPerMinute: integer('burst_per_minute').notNull(),
    /** After this instant the key is refused; null means it does not expire. */
    expiresAt: timestamp('expires_at', { withTimezone: true }),
    /** When the key was revoked; a revoked key is refused from that instant on. */
    revokedAt: timestamp('revoked_at', { withTimezone: true }),
    /** Member who created the key (an admin may create keys for others); null when created from the CLI. */
    createdBy: uuid('created_by').references(() => users.id, { onDelete: 'set null' }),
    /** When the key was created. */
    createdAt: timestamp('created_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [
    uniqueIndex('api_keys_hash_unique').on(t.keyHash),
    index('api_keys_organisation_idx').on(t.organisationId),
    index('api_keys_user_idx').on(t.userId),
  ],
);

/** Units a key has spent on one UTC day; the quota check and the spend are one conditional statement. */
export const keyQuotaDays = pgTable(
  'key_quota_days',
  {
    /** The key that spent the units. */
    keyId: uuid('key_id')
      .notNull()
      .references(() => apiKeys.id, { onDelete: 'cascade' }),
    /** The UTC calendar day the units count against. */
    day: date('day', { mode: 'string' }).notNull(),
    /** Units spent so far that day; never exceeds the key's daily quota. */
    used: integer('used').notNull().default(0),
    /** When the owner was told the key passed 80 % of its quota that day (set once). */
    warned80At: timestamp('warned_80_at', { withTimezone: true }),
    /** When the owner was told the key reached its whole quota that day (set once). */
    warned100At: timestamp('warned_100_at', { withTimezone: true }),
  },
  (t) => [primaryKey({ columns: [t.keyId, t.day] })],
);

/** Usage per key (or per member for console calls, key null), per endpoint, per UTC day. */
export const usageDaily = pgTable(
  'usage_daily',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    /** Organisation the usage belongs to; usage queries filter on it. */
    organisationId: uuid('organisation_id')
      .notNull()
      .references(() => organisations.id, { onDelete: 'cascade' }),
    /** Member whose key or console session made the calls. */
    userId: uuid('user_id')
      .notNull()
      .references(() => users.id, { onDelete: 'cascade' }),
    /** Key that made the calls; null for calls from the console (a signed-in session). */
    keyId: uuid('key_id').references(() => apiKeys.id, { onDelete: 'cascade' }),
    /** Name of the metered endpoint, e.g. `mismatch`. */
    endpoint: text('endpoint').notNull(),
    /** UTC calendar day. */
    day: date('day', { mode: 'string' }).notNull(),
    /** Calculation units spent (a batch spends one per item). */
    units: integer('units').notNull().default(0),
    /** Requests admitted. */
    requests: integer('requests').notNull().default(0),
  },
  (t) => [
    uniqueIndex('usage_daily_key_unique').on(t.keyId, t.endpoint, t.day).where(sql`${t.keyId} is not null`),
    uniqueIndex('usage_daily_console_unique').on(t.userId, t.endpoint, t.day).where(sql`${t.keyId} is null`),
    index('usage_daily_organisation_day_idx').on(t.organisationId, t.day),
  ],
);

/** Hits per rate-limit window, shared by every server process (express-rate-limit store). */
export const rateLimitHits = pgTable('rate_limit_hits', {
  /** Limiter prefix plus the caller it counts, e.g. `burst:key:<id>` or `sign-in:address:<ip>`. */
  key: text('key').primaryKey(),
  /** Hits counted in the current window. */
  hits: integer('hits').notNull(),
  /** When the current window ends and the count starts again. */
  resetAt: timestamp('reset_at', { withTimezone: true }).notNull(),
});

export const invitations = pgTable(
  'invitations',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    /** Organisation the invited person will join. */
    organisationId: uuid('organisation_id')
      .notNull()
      .references(() => organisations.id, { onDelete: 'cascade' }),
    /** Address the invitation was sent to (lower-cased); it becomes the member's sign-in address. */
    email: text('email').notNull(),
    /** Role the member gets on accepting. */
    role: memberRole('role').notNull().default('developer'),
    /** SHA-256 of the single-use token sent by e-mail. */
    tokenHash: text('token_hash').notNull(),
    /** Admin who sent the invitation. */
    invitedBy: uuid('invited_by').references(() => users.id, { onDelete: 'set null' }),
    /** After this instant the token is refused. */
    expiresAt: timestamp('expires_at', { withTimezone: true }).notNull(),
    /** When the invitation was accepted (the token is spent). */
    acceptedAt: timestamp('accepted_at', { withTimezone: true }),
    /** When an admin withdrew the invitation. */
    withdrawnAt: timestamp('withdrawn_at', { withTimezone: true }),
    /** When the invitation was sent. */
    createdAt: timestamp('created_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [uniqueIndex('invitations_token_unique').on(t.tokenHash), index('invitations_organisation_idx').on(t.organisationId)],
);

export const passwordResets = pgTable(
  'password_resets',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    /** Member who asked to choose a new password. */
    userId: uuid('user_id')
      .notNull()
      .references(() => users.id, { onDelete: 'cascade' }),
    /** SHA-256 of the single-use token sent by e-mail. */
    tokenHash: text('token_hash').notNull(),
    /** After this instant the token is refused. */
    expiresAt: timestamp('expires_at', { withTimezone: true }).notNull(),
    /** When the token was used (or superseded); a used token is refused. */
    usedAt: timestamp('used_at', { withTimezone: true }),
    /** When the reset was asked for. */
    createdAt: timestamp('created_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [uniqueIndex('password_resets_token_unique').on(t.tokenHash), index('password_resets_user_idx').on(t.userId)],
);

/** Who did what to keys, quotas and roles, and when; rows are only ever added. */
export const auditEvents = pgTable(
  'audit_events',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    /** Organisation the event happened in. */
    organisationId: uuid('organisation_id')
      .notNull()
      .references(() => organisations.id, { onDelete: 'cascade' }),
    /** Member who acted; null when an operator acted through the CLI. */
    actorUserId: uuid('actor_user_id').references(() => users.id, { onDelete: 'set null' }),
    /** Readable name of the actor at the time (an address, or `operator (CLI)`). */
    actorLabel: text('actor_label').notNull(),
    /** What happened, e.g. `key.created`, `key.revoked`, `key.quota_changed`, `member.role_changed`. */
    action: text('action').notNull(),
    /** Kind of thing acted on: `key`, `member`, `invitation` or `organisation`. */
    targetType: text('target_type').notNull(),
    /** Id of the thing acted on. */
    targetId: uuid('target_id').notNull(),
    /** Before/after values and other facts of the event. */
    details: jsonb('details').notNull().default({}),
    /** When it happened. */
    createdAt: timestamp('created_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index('audit_events_organisation_created_idx').on(t.organisationId, t.createdAt)],
);

/** Outgoing mail caught by the local SMTP server (local mode only); admins read it through the API. */
export const capturedMail = pgTable(
  'captured_mail',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    /** Envelope sender. */
    envelopeFrom: text('envelope_from').notNull(),
    /** Envelope recipients. */
    envelopeTo: text('envelope_to').array().notNull(),
    /** Decoded Subject header. */
    subject: text('subject').notNull().default(''),
    /** Decoded plain-text body. */
    textBody: text('text_body').notNull().default(''),
    /** The message as received, headers and all. */
    raw: text('raw').notNull(),
    /** When the local SMTP server accepted the message. */
    receivedAt: timestamp('received_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index('captured_mail_received_idx').on(t.receivedAt)],
);

/** Console sessions, in the layout connect-pg-simple expects. */
export const userSessions = pgTable(
  'user_sessions',
  {
    /** Session id carried by the signed cookie. */
    sid: varchar('sid').primaryKey(),
    /** Session data: the member's id and the CSRF token. */
    sess: json('sess').notNull(),
    /** When the session stops being valid. */
    expire: timestamp('expire', { precision: 6 }).notNull(),
  },
  (t) => [index('IDX_user_sessions_expire').on(t.expire)],
);
