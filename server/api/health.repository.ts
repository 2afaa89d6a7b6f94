import { sql } from 'drizzle-orm';
import type { Db } from '../db/client.ts';

/** Resolves when the database answers a trivial query; rejects when it cannot be reached. */
export async function pingDatabase(db: Db): Promise<void> {
  await db.execute(sql`select 1`);
}
