import { randomBytes } from 'node:crypto';
import pg from 'pg';
import { openDatabase, type Database } from '../../server/db/client.ts';

/** Set by `npm test` (scripts/test.mjs): the throwaway cluster and the migrated template database. */
function testServer(): { serverUrl: string; template: string } {
  const serverUrl = process.env.TEST_PG_SERVER_URL;
  const template = process.env.TEST_PG_TEMPLATE;
  if (!serverUrl || !template) {
    throw new Error('Integration and HTTP tests need the PostgreSQL that `npm test` starts; run them with `npm test -- <filter>`.');
  }
  return { serverUrl, template };
}

export interface TestDatabase extends Database {
  url: string;
  /** Closes the pool and drops the database. */
  drop(): Promise<void>;
}

/** A fresh database per test file, copied from the migrated template (fast, isolated). */
export async function createTestDatabase(): Promise<TestDatabase> {
  const { serverUrl, template } = testServer();
  const name = `t_${randomBytes(6).toString('hex')}`;
  const admin = new pg.Client({ connectionString: `${serverUrl}/postgres` });
  await admin.connect();
  try {
    await admin.query(`create database ${name} template ${template}`);
  } finally {
    await admin.end();
  }
  const url = `${serverUrl}/${name}`;
  const database = openDatabase(url);
  return {
    ...database,
    url,
    async drop() {
      await database.close();
      const client = new pg.Client({ connectionString: `${serverUrl}/postgres` });
      await client.connect();
      try {
        await client.query(`drop database if exists ${name} with (force)`);
      } finally {
        await client.end();
      }
    },
  };
}
