import pg from 'pg';
import { drizzle, type NodePgDatabase } from 'drizzle-orm/node-postgres';
import * as schema from './schema.ts';

export type Db = NodePgDatabase<typeof schema>;
/** A transaction handle, which runs the same queries as `Db`. */
export type Tx = Parameters<Parameters<Db['transaction']>[0]>[0];
/** What a repository function runs its queries on: the pool or an open transaction. */
export type DbOrTx = Db | Tx;

export interface Database {
  db: Db;
  pool: pg.Pool;
  close(): Promise<void>;
}

export interface DatabaseOptions {
  max?: number;
  /**
   * PostgreSQL cancels a statement running longer (ms; 0 or unset = no limit), so a lock held
   * elsewhere or a runaway query answers 503 instead of holding the request and a pool connection.
   */
  statementTimeoutMs?: number;
}

/**
 * A transaction left open while the code awaits something else holds its locks; after this long
 * PostgreSQL ends the session instead (no request of ours legitimately idles that long inside one).
 */
const IDLE_IN_TRANSACTION_TIMEOUT_MS = 60_000;

/** Opens a pool for one process; callers own its lifetime (tests build their own). */
export function openDatabase(url: string, options: DatabaseOptions = {}): Database {
  const pool = new pg.Pool({
    connectionString: url,
    max: options.max ?? 10,
    // Fail fast when the database is down so requests get a 503 problem instead of hanging.
    connectionTimeoutMillis: 3_000,
    idleTimeoutMillis: 30_000,
    ...(options.statementTimeoutMs ? { statement_timeout: options.statementTimeoutMs } : {}),
    idle_in_transaction_session_timeout: IDLE_IN_TRANSACTION_TIMEOUT_MS,
  });
  // An idle client losing its connection (database restart) must not crash the process.
  pool.on('error', () => {});
  const db = drizzle({ client: pool, schema });
  return { db, pool, close: () => pool.end() };
}

/**
 * Runs work on one connection of the pool with no statement timeout: maintenance that may rightly
 * take longer than a request should (migrations waiting for another process, pruning a large
 * backlog). The connection goes back to the pool with its own timeout restored.
 */
export async function withoutStatementTimeout<T>(pool: pg.Pool, work: (client: pg.PoolClient) => Promise<T>): Promise<T> {
  const client = await pool.connect();
  try {
    await client.query('set statement_timeout = 0');
    try {
      return await work(client);
    } finally {
      await client.query('reset statement_timeout');
    }
  } finally {
    client.release();
  }
}
