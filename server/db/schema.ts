import { sql } from 'drizzle-orm';
import { bigint, boolean, customType, date, doublePrecision, index, integer, json, jsonb, pgEnum, pgTable, primaryKey, text, timestamp, uniqueIndex, uuid, varchar } from 'drizzle-orm/pg-core';

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
    /**
     * Exact browser origins (`https://log.example.org`) whose pages may call the API with this key; a
     * request with an `Origin` header outside the list is refused. Empty: no browser page may use it.
     */
    allowedOrigins: text('allowed_origins').array().notNull().default(sql`'{}'::text[]`),
    /** When the key was created. */
    createdAt: timestamp('created_at', { withTimezone: true }).notNull().defaultNow(),
    /**
     * Latest request the key authenticated, as written by the servers' periodic usage flush (about once
     * a second), not per request; null when it has never been used. A crash loses at most the last flush.
     */
    lastUsedAt: timestamp('last_used_at', { withTimezone: true }),
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
    /** Units spent or reserved by a server process so far that day; never exceeds the key's daily quota. */
    used: integer('used').notNull().default(0),
    /** When the owner was told the key passed 80 % of its quota that day (set once). */
    warned80At: timestamp('warned_80_at', { withTimezone: true }),
    /** When the owner was told the key reached its whole quota that day (set once). */
    warned100At: timestamp('warned_100_at', { withTimezone: true }),
  },
  (t) => [primaryKey({ columns: [t.keyId, t.day] })],
);

/**
 * Quota units a server process has reserved for a key and day and not yet reported spent (see
 * server/quota/key-leases.ts). The reservation is already in key_quota_days.used; this row only tells
 * other processes whom to ask for unspent units before they refuse a request, and is refreshed at every
 * lease and usage flush, so a row not touched for a while belongs to a process that has gone.
 */
export const quotaLeases = pgTable(
  'quota_leases',
  {
    /** The server process (random per start) holding the units. */
    instanceId: uuid('instance_id').notNull(),
    keyId: uuid('key_id')
      .notNull()
      .references(() => apiKeys.id, { onDelete: 'cascade' }),
    day: date('day', { mode: 'string' }).notNull(),
    /** Units reserved by that process and unspent at its last report (an upper bound). */
    units: integer('units').notNull().default(0),
    updatedAt: timestamp('updated_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [primaryKey({ columns: [t.instanceId, t.keyId, t.day] }), index('quota_leases_key_day_idx').on(t.keyId, t.day)],
);

/**
 * The last usage flush applied per server process: a flush whose answer was lost is sent again with
 * the same number and skipped, so buffered usage is counted exactly once.
 */
export const usageFlushes = pgTable('usage_flushes', {
  instanceId: uuid('instance_id').primaryKey(),
  seq: bigint('seq', { mode: 'number' }).notNull(),
  updatedAt: timestamp('updated_at', { withTimezone: true }).notNull().defaultNow(),
});

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
    /** The organisation the message was sent for (its X-Gammaline-Organisation header); only its admins see it. */
    organisationId: uuid('organisation_id').references(() => organisations.id, { onDelete: 'cascade' }),
    /** When the local SMTP server accepted the message. */
    receivedAt: timestamp('received_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index('captured_mail_received_idx').on(t.receivedAt), index('captured_mail_organisation_idx').on(t.organisationId, t.receivedAt)],
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

/** Raw bytes; used for packed float64 sweep points (exact doubles, a third of the size of JSON). */
const bytea = customType<{ data: Buffer; driverData: Buffer }>({ dataType: () => 'bytea' });

/** Cables an organisation defines for itself, usable everywhere a catalog cable id is. */
export const accountCables = pgTable(
  'account_cables',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    /** Owning organisation; only its members see and use the cable. */
    organisationId: uuid('organisation_id')
      .notNull()
      .references(() => organisations.id, { onDelete: 'cascade' }),
    /** The id requests use (`cableId`); always starts with `account-`, so it never collides with a catalog id. Unique per organisation. */
    cableId: text('cable_id').notNull(),
    /** Name people know the cable by, e.g. the reel label. */
    designation: text('designation').notNull(),
    /** Nominal characteristic impedance in ohms. */
    impedanceOhm: doublePrecision('impedance_ohm').notNull(),
    /** Velocity factor, 0 < VF ≤ 1. */
    velocityFactor: doublePrecision('velocity_factor').notNull(),
    /** Matched loss against frequency, in the catalog's model: `{ kind: 'k1k2', k1, k2 }` or `{ kind: 'table', points }`. */
    attenuation: jsonb('attenuation').notNull(),
    /** RMS voltage rating in volts; null when unknown (no voltage caution is given then). */
    maxVoltageRmsV: doublePrecision('max_voltage_rms_v'),
    /** Where the figures come from (datasheet, own measurement), as the admin stated it. */
    source: text('source').notNull(),
    /** Free text shown with the cable. */
    notes: text('notes').notNull().default(''),
    /** Member who defined the cable. */
    createdBy: uuid('created_by').references(() => users.id, { onDelete: 'set null' }),
    /** When the cable was defined. */
    createdAt: timestamp('created_at', { withTimezone: true }).notNull().defaultNow(),
    /** When the cable was last changed. */
    updatedAt: timestamp('updated_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [uniqueIndex('account_cables_organisation_cable_unique').on(t.organisationId, t.cableId)],
);

/** A station's feed line, described once and referred to by id: ordered sections from the transmitter end. */
export const feedlines = pgTable(
  'feedlines',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    /** Owning organisation; every query filters on it. */
    organisationId: uuid('organisation_id')
      .notNull()
      .references(() => organisations.id, { onDelete: 'cascade' }),
    /** Name chosen by the member, e.g. "Hut to mast, 40 m dipole". */
    name: text('name').notNull(),
    /** Free text. */
    notes: text('notes').notNull().default(''),
    /** Sections listed from the transmitter (source) end to the antenna, as validated by FeedlineSectionSchema. */
    sections: jsonb('sections').notNull(),
    /** Member who saved the feed line. */
    createdBy: uuid('created_by').references(() => users.id, { onDelete: 'set null' }),
    /** When the feed line was saved. */
    createdAt: timestamp('created_at', { withTimezone: true }).notNull().defaultNow(),
    /** When the feed line was last changed. */
    updatedAt: timestamp('updated_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index('feedlines_organisation_idx').on(t.organisationId, t.createdAt)],
);

/** An uploaded one-port sweep with the parameters it was analysed with. */
export const sweeps = pgTable(
  'sweeps',
  {
    id: uuid('id').primaryKey().defaultRandom(),
    /** Owning organisation; every query filters on it. */
    organisationId: uuid('organisation_id')
      .notNull()
      .references(() => organisations.id, { onDelete: 'cascade' }),
    /** Member who uploaded the sweep. */
    createdBy: uuid('created_by').references(() => users.id, { onDelete: 'set null' }),
    /** Name shown in lists. */
    name: text('name').notNull(),
    /** How the points arrived: `touchstone`, `csv` or `json`. */
    sourceFormat: text('source_format').notNull(),
    /** Name of the uploaded file; null for JSON points. */
    fileName: text('file_name'),
    /** Real reference resistance (ohms) SWR and return loss are read against. */
    referenceOhm: doublePrecision('reference_ohm').notNull(),
    /** SWR under which a band counts as usable. */
    thresholdSwr: doublePrecision('threshold_swr').notNull(),
    /** `inputToLoad` or `loadToInput` when the sweep was moved through a line; null otherwise. */
    direction: text('direction'),
    /** The sections the sweep was moved through, from the transmitter end, as they were at upload (the moved points are stored, so later changes to a feed line or cable do not alter this sweep); null when not moved. */
    line: jsonb('line'),
    /** The saved feed line named at upload, if any; null after that feed line is deleted (the snapshot in `line` stays). */
    feedlineId: uuid('feedline_id').references(() => feedlines.id, { onDelete: 'set null' }),
    /** Acceptance mask as given (`{ maxSwr }` or `{ minReturnLossDb }`, optional range); null when none. */
    mask: jsonb('mask'),
    /** Number of frequency points. */
    pointCount: integer('point_count').notNull(),
    /** First frequency, Hz. */
    startHz: doublePrecision('start_hz').notNull(),
    /** Last frequency, Hz. */
    stopHz: doublePrecision('stop_hz').notNull(),
    /** The points as measured: little-endian float64 triples (frequency Hz, R ohm, X ohm), NaN R/X for an open circuit. */
    measuredPoints: bytea('measured_points').notNull(),
    /** The points after moving through `line`, same packing; null when the sweep was not moved (the measured points are analysed). */
    movedPoints: bytea('moved_points'),
    /** The analysis summary (minimum SWR, bands, resonances), kept so lists need no points. */
    summary: jsonb('summary').notNull(),
    /** Acceptance verdict when a mask was given; null otherwise. */
    verdict: jsonb('verdict'),
    /** When the sweep was uploaded. */
    createdAt: timestamp('created_at', { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index('sweeps_organisation_created_idx').on(t.organisationId, t.createdAt)],
);
