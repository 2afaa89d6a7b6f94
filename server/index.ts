import { createServer } from 'node:http';
import { pino } from 'pino';
import { createApp } from './app.ts';
import { loadConfig } from './config.ts';
import { openDatabase } from './db/client.ts';
import { migrateDatabase } from './db/migrate.ts';
import { seedDemo } from './db/seed.ts';
import { startMailCapture, type MailCapture } from './mail/capture.ts';
import { createMailer } from './mail/mailer.ts';
import { pruneRateLimitHits } from './quota/pg-rate-limit-store.ts';

const config = loadConfig();
const logger = pino({ level: config.logLevel });
const database = openDatabase(config.databaseUrl);

try {
  await migrateDatabase(database.pool);
  if (config.mode === 'local') {
    const seeded = await seedDemo(database.db, config.demoAdmin);
    logger.info({ organisationId: seeded.organisationId, email: config.demoAdmin.email }, 'demo scenario ready');
  }
} catch (err) {
  logger.fatal({ err }, 'could not prepare the database');
  await database.close();
  process.exit(1);
}

let capture: MailCapture | undefined;
if (!config.smtpUrl) {
  // Local mode only (config refuses production without SMTP_URL): catch every message in PostgreSQL.
  capture = await startMailCapture({ database, logger });
}
const mailer = createMailer({ url: config.smtpUrl ?? capture!.url, from: config.mailFrom, logger });

const app = createApp({ database, config, logger, mailer });
const server = createServer(app);
server.listen(config.port, config.host, () => {
  const address = server.address();
  const port = typeof address === 'object' && address ? address.port : config.port;
  logger.info({ url: `http://${config.host}:${port}` }, 'Gammaline is listening');
  console.log(`Gammaline: console http://${config.host}:${port}/  ·  API reference http://${config.host}:${port}/docs`);
});

// Ended rate-limit windows are swept every 15 minutes; a failure only means a bigger sweep next time.
const pruneTimer = setInterval(() => {
  pruneRateLimitHits(database.pool).catch((err: unknown) => logger.warn({ err }, 'could not prune rate-limit windows'));
}, 15 * 60 * 1000).unref();

let stopping = false;
async function shutdown(signal: string): Promise<void> {
  if (stopping) return;
  stopping = true;
  logger.info({ signal }, 'shutting down');
  const force = setTimeout(() => process.exit(1), 10_000).unref();
  clearInterval(pruneTimer);
  server.close(async () => {
    mailer.close();
    await capture?.close().catch(() => {});
    await database.close().catch(() => {});
    clearTimeout(force);
    process.exit(0);
  });
  server.closeIdleConnections();
}
process.on('SIGTERM', () => void shutdown('SIGTERM'));
process.on('SIGINT', () => void shutdown('SIGINT'));
