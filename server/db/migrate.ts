import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type pg from 'pg';
import { drizzle } from 'drizzle-orm/node-postgres';
import { migrate } from 'drizzle-orm/node-postgres/migrator';
import { withoutStatementTimeout } from './client.ts';

export const MIGRATIONS_FOLDER = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../drizzle');

/** An arbitrary constant: processes starting together take turns applying migrations. */
const MIGRATION_LOCK_KEY = 7_340_021;

/** Applies the committed migrations in `drizzle/`; idempotent and safe with several processes at once. */
export async function migrateDatabase(pool: pg.Pool): Promise<void> {
  // The lock and the migrator must share one connection. Waiting for another process's migration and
  // rewriting a big table may both take longer than the serving pool's statement timeout.
  await withoutStatementTimeout(pool, async (client) => {
    await client.query('select pg_advisory_lock($1)', [MIGRATION_LOCK_KEY]);
    try {
      await migrate(drizzle({ client }), { migrationsFolder: MIGRATIONS_FOLDER });
    } finally {
      await client.query('select pg_advisory_unlock($1)', [MIGRATION_LOCK_KEY]);
    }
  });
}
