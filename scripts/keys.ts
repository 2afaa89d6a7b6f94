// `npm run keys -- <command>`: API keys for operators, against the same database as `npm start`.
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { parseArgs } from 'node:util';
import { fileURLToPath } from 'node:url';
import { asc, eq } from 'drizzle-orm';
import { openDatabase, type Database } from '../server/db/client.ts';
import { apiKeys, organisations } from '../server/db/schema.ts';
import { CLI_ACTOR } from '../server/api/v1/audit/audit.repository.ts';
import { listKeys } from '../server/api/v1/keys/keys.repository.ts';
import { AllowedOriginsSchema } from '../server/api/v1/keys/keys.schemas.ts';
import { createKey, revokeKey, updateKey } from '../server/api/v1/keys/keys.service.ts';
import { findMemberByEmail } from '../server/api/v1/members/members.repository.ts';
import { ApiError } from '../server/http/problem.ts';
import { utcDay } from '../server/quota/day.ts';

const USAGE = `Usage:
  npm run keys -- create --email <member> --name <name> [--note <text>] [--daily-quota <units>] [--burst <per-minute>] [--expires <ISO 8601 instant>] [--origin <origin>]...
  npm run keys -- origins <id> [--origin <origin>]...
  npm run keys -- list [--json]
  npm run keys -- revoke <id>

--origin (repeatable) lets web pages of that exact origin, e.g. https://log.example.org, use the key from a
browser; \`origins <id>\` replaces a key's list (without --origin: no page may use it any more).

The database is DATABASE_URL, or the one \`npm start\` recorded in .data/database-url.
With \`npm start\` running, it prints the URL it uses (postgres://postgres@127.0.0.1:<port>/gammaline).`;

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');

class UsageError extends Error {}

function databaseUrl(): string {
  if (process.env.DATABASE_URL) return process.env.DATABASE_URL;
  // DATABASE_URL_FILE lets tests point away from a developer's running `npm start`.
  const recorded = process.env.DATABASE_URL_FILE ?? path.join(root, '.data', 'database-url');
  if (existsSync(recorded)) return readFileSync(recorded, 'utf8').trim();
  throw new UsageError('Set DATABASE_URL to the PostgreSQL database of the running Gammaline (npm start prints it), e.g.\n  DATABASE_URL=postgres://postgres@127.0.0.1:54321/gammaline npm run keys -- list');
}

/** The `--origin` values, checked like the API checks `allowedOrigins`. */
function origins(values: string[] | undefined): string[] {
  const parsed = AllowedOriginsSchema.safeParse(values ?? []);
  if (parsed.success) return parsed.data;
  const issue = parsed.error.issues[0]!;
  const which = typeof issue.path[0] === 'number' ? ` "${values![issue.path[0]]}"` : '';
  throw new UsageError(`--origin${which}: ${issue.message}.`);
}

function keyIdArgument(id: string | undefined): string {
  if (!id) throw new UsageError('Give the key id (see `npm run keys -- list`).');
  if (!/^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i.test(id)) throw new UsageError(`"${id}" is not a key id; ids are UUIDs as shown by \`npm run keys -- list\`.`);
  return id;
}

async function organisationOfKey(database: Database, id: string): Promise<string> {
  const [row] = await database.db.select({ organisationId: apiKeys.organisationId }).from(apiKeys).where(eq(apiKeys.id, id));
  if (!row) throw new UsageError(`No key with id ${id}.`);
  return row.organisationId;
}

function positiveInt(value: string | undefined, flag: string): number | undefined {
  if (value === undefined) return undefined;
  const n = Number(value);
  if (!Number.isInteger(n) || n < 1) throw new UsageError(`${flag} must be a whole number of at least 1, not "${value}".`);
  return n;
}

async function create(database: Database, args: string[]): Promise<void> {
  const { values } = parseArgs({
    args,
    options: {
      email: { type: 'string' },
      name: { type: 'string' },
      note: { type: 'string', default: '' },
      'daily-quota': { type: 'string' },
      burst: { type: 'string' },
      expires: { type: 'string' },
      origin: { type: 'string', multiple: true },
    },
    strict: true,
  });
  if (!values.email || !values.name?.trim()) throw new UsageError('create needs --email <member> and --name <name>.');
  const allowedOrigins = origins(values.origin);
  let expiresAt: Date | undefined;
  if (values.expires !== undefined) {
    expiresAt = new Date(values.expires);
    if (Number.isNaN(expiresAt.getTime())) throw new UsageError(`--expires must be an ISO 8601 instant such as 2026-12-31T23:59:59Z, not "${values.expires}".`);
  }
  const member = await findMemberByEmail(database.db, values.email);
  if (!member) throw new UsageError(`No member signs in with ${values.email}; invite them first (POST /api/v1/invitations) or check the address.`);
  const created = await createKey(
    database.db,
    {
      organisationId: member.organisationId,
      ownerId: member.id,
      name: values.name.trim(),
      note: values.note ?? '',
      expiresAt,
      dailyQuota: positiveInt(values['daily-quota'], '--daily-quota'),
      burstPerMinute: positiveInt(values.burst, '--burst'),
      allowedOrigins,
      actor: CLI_ACTOR,
    },
    new Date(),
  );
  const k = created.key;
  console.log(`Key "${k.name}" for ${k.owner.email} (id ${k.id}): ${k.dailyQuota} units a day, ${k.burstPerMinute} requests a minute${k.expiresAt ? `, expires ${k.expiresAt}` : ''}.`);
  if (k.allowedOrigins.length > 0) console.log(`Web pages of ${k.allowedOrigins.join(', ')} may use it from a browser.`);
  console.log('Copy it now; it is not shown again:');
  console.log(created.secret);
}

async function list(database: Database, args: string[]): Promise<void> {
  const { values } = parseArgs({ args, options: { json: { type: 'boolean', default: false } }, strict: true });
  const now = new Date();
  const orgs = await database.db.select({ id: organisations.id, slug: organisations.slug }).from(organisations).orderBy(asc(organisations.slug));
  const rows = [];
  for (const org of orgs) {
    for (const key of await listKeys(database.db, { organisationId: org.id, now, day: utcDay(now) })) rows.push({ organisation: org.slug, ...key });
  }
  if (values.json) {
    console.log(JSON.stringify(rows, null, 2));
    return;
  }
  if (rows.length === 0) {
    console.log('No keys yet. Create one with: npm run keys -- create --email <member> --name <name>');
    return;
  }
  const table = [
    ['id', 'start', 'owner', 'state', 'quota/day', 'used today', 'name'],
    ...rows.map((r) => [r.id, r.displayStart, r.owner.email, r.state, String(r.dailyQuota), String(r.usedToday), r.name]),
  ];
  const widths = table[0]!.map((_, i) => Math.max(...table.map((row) => row[i]!.length)));
  for (const row of table) console.log(row.map((cell, i) => cell.padEnd(widths[i]!)).join('  ').trimEnd());
}

async function setOrigins(database: Database, args: string[]): Promise<void> {
  const { values, positionals } = parseArgs({ args, options: { origin: { type: 'string', multiple: true } }, allowPositionals: true, strict: true });
  if (positionals.length > 1) throw new UsageError('origins takes one key id, then any number of --origin <origin>.');
  const id = keyIdArgument(positionals[0]);
  const allowedOrigins = origins(values.origin);
  const organisationId = await organisationOfKey(database, id);
  const key = await updateKey(database.db, { organisationId, keyId: id, actor: CLI_ACTOR, changes: { allowedOrigins } }, new Date());
  console.log(
    key.allowedOrigins.length > 0
      ? `Key ${key.id} ("${key.name}" of ${key.owner.email}) now serves web pages of ${key.allowedOrigins.join(', ')}, on every server at once.`
      : `Key ${key.id} ("${key.name}" of ${key.owner.email}) now serves no web page; requests without an Origin header still work.`,
  );
}

async function revoke(database: Database, args: string[]): Promise<void> {
  if (!args[0] || args.length > 1) throw new UsageError('revoke needs exactly one key id (see `npm run keys -- list`).');
  const id = keyIdArgument(args[0]);
  const organisationId = await organisationOfKey(database, id);
  const key = await revokeKey(database.db, { organisationId, keyId: id, actor: CLI_ACTOR }, new Date());
  console.log(`Revoked key ${key.id} (${key.displayStart}…, "${key.name}" of ${key.owner.email}); it is refused from now on.`);
}

const [command, ...rest] = process.argv.slice(2);
const commands: Record<string, (database: Database, args: string[]) => Promise<void>> = { create, origins: setOrigins, list, revoke };
const run = command ? commands[command] : undefined;
if (!run) {
  console.error(command ? `Unknown command "${command}".\n\n${USAGE}` : USAGE);
  process.exit(2);
}

let database: Database | undefined;
try {
  database = openDatabase(databaseUrl(), { max: 2 });
  await run(database, rest);
} catch (err) {
  if (err instanceof UsageError || (err instanceof Error && err.name === 'TypeError' && 'code' in err && String(err.code).startsWith('ERR_PARSE_ARGS'))) {
    console.error(err.message);
    process.exitCode = 2;
  } else if (err instanceof ApiError) {
    console.error(err.message);
    process.exitCode = 1;
  } else {
    console.error(`keys: ${err instanceof Error ? err.message : String(err)}`);
    process.exitCode = 1;
  }
} finally {
  await database?.close();
}
