import pg from 'pg';
import { drizzle, type NodePgDatabase } from 'drizzle-orm/node-postgres';
import * as schema from './schema.ts';

export type Db = NodePgDatabase<typeof schema>;

export interface Database {
  db: Db;
  pool: pg.Pool;
  close(): Promise<void>;
}

/** Opens a pool for one process; callers own its lifetime (tests build their own). */
export function openDatabase(url: string, options: { max?: number } = {}): Database {
  const pool = new pg.Pool({
    connectionString: url,
    max: options.max ?? 10,
    // Fail fast when the database is down so requests get a 503 problem instead of hanging.
    connectionTimeoutMillis: 3_000,
    idleTimeoutMillis: 30_000,
  });
  // An idle client losing its connection (database restart) must not crash the process.
  pool.on('error', () => {});
  const db = drizzle({ client: pool, schema });
  return { db, pool, close: () => pool.end() };
}
