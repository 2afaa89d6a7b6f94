import { createApp } from '../../server/app.ts';
import { testConfig, type AppConfig } from '../../server/config.ts';
import { openDatabase } from '../../server/db/client.ts';
import { createTestDatabase, type TestDatabase } from './db.ts';

/** An app on its own fresh database; call `close()` in afterAll. */
export async function createTestApp(overrides: Partial<AppConfig> = {}) {
  const database: TestDatabase = await createTestDatabase();
  const config = testConfig({ databaseUrl: database.url, ...overrides });
  const app = createApp({ database, config });
  return { app, database, config, close: () => database.drop() };
}

/** An app whose database is unreachable (a closed loopback port), for 503 paths. */
export function createAppWithoutDatabase() {
  const database = openDatabase('postgres://postgres@127.0.0.1:9/unreachable', { max: 1 });
  const app = createApp({ database, config: testConfig() });
  return { app, close: () => database.close() };
}
