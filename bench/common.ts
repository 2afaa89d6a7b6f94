// What the benchmark's scripts share: the bench key, the P1 reference routes and the median.
import express, { type Express } from 'express';
import { createKey } from '../server/api/v1/keys/keys.service.ts';
import { CLI_ACTOR } from '../server/api/v1/audit/audit.repository.ts';
import { openDatabase } from '../server/db/client.ts';
import { migrateDatabase } from '../server/db/migrate.ts';
import { seedDemo } from '../server/demo/seed.ts';

/** Migrates and seeds the throwaway database and returns a key whose quota no run can spend. */
export async function prepareBenchKey(url: string): Promise<string> {
  const database = openDatabase(url, { max: 2 });
  try {
    await migrateDatabase(database.pool);
    const seeded = await seedDemo(database.db, { email: 'bench@kestrel-ridge.example', password: 'bench-password-1' });
    const created = await createKey(
      database.db,
      { organisationId: seeded.organisationId, ownerId: seeded.adminId, name: 'bench', note: '', dailyQuota: 2_000_000_000, burstPerMinute: 2_000_000_000, actor: CLI_ACTOR },
      new Date(),
    );
    return created.secret;
  } finally {
    await database.close();
  }
}

/**
 * P1's strict ceiling, for `createApp({ first })`: a bare JSON route ahead of everything, even the
 * server-wide middleware every route of the server passes (reported beside the ratio, not judged).
 */
export function mountStrictBareRoute(app: Express): void {
  app.post('/bench/bare-first', express.json(), (_req, res) => {
    res.json({ ok: true });
  });
}

/**
 * P1's reference, for `createApp({ beforeApi })`: a bare JSON route in the same server, where any of
 * its routes sits. It gets what every route gets (request id, security headers, body limit, parsed
 * JSON body; under /api, the API's header set) and none of a calculation's own work: no key check,
 * quota, validation or calculation.
 */
export function mountSameServerBareRoute(app: Express): void {
  app.post('/api/bench/bare', (_req, res) => {
    res.json({ ok: true });
  });
}

/** The middle value; for an even count the mean of the two middle ones (P1 runs pairs in even numbers). */
export function median(xs: number[]): number {
  if (xs.length === 0) return NaN;
  const sorted = [...xs].sort((a, b) => a - b);
  const mid = Math.floor(sorted.length / 2);
  return sorted.length % 2 === 1 ? sorted[mid]! : (sorted[mid - 1]! + sorted[mid]!) / 2;
}
