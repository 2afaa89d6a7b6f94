import cluster, { type Worker } from 'node:cluster';
import type { IncomingMessage, ServerResponse } from 'node:http';
import { pino, type Logger } from 'pino';
import { createApp } from './app.ts';
import { createAppServer } from './http/app-server.ts';
import { loadConfig, type AppConfig } from './config.ts';
import { openDatabase, type Database } from './db/client.ts';
import { isDatabaseUnavailable } from './db/unavailable.ts';
import { ApiError, PROBLEM_CONTENT_TYPE } from './http/problem.ts';
import { migrateDatabase } from './db/migrate.ts';
import { seedDemo } from './demo/seed.ts';
import { startMailCapture, type MailCapture } from './mail/capture.ts';
import { createMailer } from './mail/mailer.ts';
import { pruneRateLimitHits } from './quota/pg-rate-limit-store.ts';
import { pruneQuotaBookkeeping } from './quota/quota.repository.ts';

// `WORKERS=n` (default 1) runs n server processes sharing the port (node:cluster). The primary
// migrates and seeds once, runs the local mail capture and the pruning timer, forks the workers,
// replaces a worker that dies, and on SIGTERM/SIGINT stops them gracefully before it exits.
// With one worker everything runs in this process, as before.

/** Set by the primary for its workers: the capture server's SMTP URL in local mode. */
const CAPTURE_URL_ENV = 'GAMMALINE_CAPTURE_SMTP_URL';
/** A graceful stop that takes longer than this ends with exit code 1 (or SIGKILL for a worker). */
const STOP_GRACE_MS = 10_000;

function workerCount(): number {
  const raw = process.env.WORKERS;
  if (raw === undefined || raw === '') return 1;
  const n = Number(raw);
  if (!Number.isInteger(n) || n < 1 || n > 64) throw new Error(`WORKERS must be a whole number from 1 to 64 (one per CPU core is a good start); got "${raw}"`);
  return n;
}

/** Migrations and demo seed: once per deployment host, not once per worker. */
async function prepareDatabase(config: AppConfig, logger: Logger, database: Database): Promise<void> {
  await migrateDatabase(database.pool);
  if (config.mode === 'local') {
    const seeded = await seedDemo(database.db, config.demoAdmin);
    logger.info({ organisationId: seeded.organisationId, email: config.demoAdmin.email }, 'demo scenario ready');
  }
}

/**
 * A database that is down at start is waited for, not fatal: the process stays up (answering 503
 * meanwhile) and prepares the database as soon as it answers. Any other failure (a broken migration)
 * still stops the process, because retrying cannot fix it.
 */
async function prepareWhenReachable(config: AppConfig, logger: Logger, database: Database): Promise<void> {
  for (let attempt = 1; ; attempt++) {
    try {
      await prepareDatabase(config, logger, database);
      return;
    } catch (err) {
      if (!isDatabaseUnavailable(err)) throw err;
      const waitMs = Math.min(5_000, 500 * attempt);
      logger.warn({ err: (err as Error).message, retryInMs: waitMs }, 'the database is unreachable; waiting for it');
      await new Promise((resolve) => setTimeout(resolve, waitMs));
    }
  }
}

/** The answer while the database is not prepared yet: a 503 problem, like any other outage. */
function answerNotReady(req: IncomingMessage, res: ServerResponse): void {
  const problem = new ApiError('unavailable', 'The service is starting and waits for its database; retry shortly.').toProblem(req.url);
  res.writeHead(503, { 'Content-Type': PROBLEM_CONTENT_TYPE, 'Retry-After': '5' });
  res.end(JSON.stringify(problem));
}

function startPruning(database: Database, logger: Logger): NodeJS.Timeout {
  // Ended rate-limit windows and old lease bookkeeping are swept every 15 minutes; a failure only means a bigger sweep next time.
  return setInterval(() => {
    pruneRateLimitHits(database.pool).catch((err: unknown) => logger.warn({ err }, 'could not prune rate-limit windows'));
    pruneQuotaBookkeeping(database.pool).catch((err: unknown) => logger.warn({ err }, 'could not prune quota lease bookkeeping'));
  }, 15 * 60 * 1000).unref();
}

function onStopSignal(stop: (signal: string) => Promise<void>): void {
  process.on('SIGTERM', () => void stop('SIGTERM'));
  process.on('SIGINT', () => void stop('SIGINT'));
}

/** One HTTP server process: a worker, or the only process when WORKERS=1. */
async function runServer(config: AppConfig, logger: Logger, options: { prepare: boolean }): Promise<void> {
  const database = openDatabase(config.databaseUrl, { statementTimeoutMs: config.statementTimeoutMs });
  let capture: MailCapture | undefined;
  let pruneTimer: NodeJS.Timeout | undefined;
  if (!config.smtpUrl && !process.env[CAPTURE_URL_ENV]) {
    // Local mode only (config refuses production without SMTP_URL): catch every message in PostgreSQL.
    capture = await startMailCapture({ database, logger });
  }
  const mailer = createMailer({ url: config.smtpUrl ?? process.env[CAPTURE_URL_ENV] ?? capture!.url, from: config.mailFrom, logger });

  const app = createApp({ database, config, logger, mailer });
  // Workers start after the primary prepared the database; a lone process prepares it after listening.
  let prepared = !options.prepare;
  const server = createAppServer(app, (req, res) => {
    if (prepared || req.url === '/healthz') app(req, res);
    else answerNotReady(req, res);
  });
  if (options.prepare) {
    prepareWhenReachable(config, logger, database).then(
      () => {
        prepared = true;
        pruneTimer = startPruning(database, logger);
      },
      async (err: unknown) => {
        logger.fatal({ err }, 'could not prepare the database');
        await database.close();
        process.exit(1);
      },
    );
  }
  server.listen(config.port, config.host, () => {
    const address = server.address();
    const port = typeof address === 'object' && address ? address.port : config.port;
    if (cluster.isWorker) {
      logger.info({ worker: cluster.worker?.id, pid: process.pid }, 'worker is listening');
      return;
    }
    logger.info({ url: `http://${config.host}:${port}` }, 'Gammaline is listening');
    console.log(`Gammaline: console http://${config.host}:${port}/  ·  API reference http://${config.host}:${port}/docs`);
  });

  let stopping = false;
  onStopSignal(async (signal) => {
    if (stopping) return;
    stopping = true;
    logger.info({ signal, pid: process.pid }, 'shutting down');
    const force = setTimeout(() => process.exit(1), STOP_GRACE_MS).unref();
    clearInterval(pruneTimer);
    server.close(async () => {
      // After the last response: give unspent quota units back, write pending usage and "last used"
      // times, close the key-change listener.
      await app.close().catch((err: unknown) => logger.warn({ err }, 'could not flush key usage on shutdown'));
      mailer.close();
      await capture?.close().catch(() => {});
      await database.close().catch(() => {});
      clearTimeout(force);
      process.exit(0);
    });
    server.closeIdleConnections();
  });
}

/** The cluster primary: prepares the database once, then forks and supervises the workers. */
async function runPrimary(config: AppConfig, logger: Logger, workers: number): Promise<void> {
  const database = openDatabase(config.databaseUrl, { max: 2 });
  let capture: MailCapture | undefined;
  try {
    await prepareWhenReachable(config, logger, database);
    if (!config.smtpUrl) capture = await startMailCapture({ database, logger });
  } catch (err) {
    logger.fatal({ err }, 'could not prepare the database');
    await database.close();
    process.exit(1);
  }
  const pruneTimer = startPruning(database, logger);
  const env = capture ? { [CAPTURE_URL_ENV]: capture.url } : {};

  let stopping = false;
  const fork = (): Worker => cluster.fork(env);
  cluster.on('exit', (worker, code, signal) => {
    if (stopping) return;
    logger.error({ worker: worker.id, code, signal }, 'a worker stopped unexpectedly; starting a new one');
    setTimeout(fork, 500);
  });
  let announced = false;
  cluster.on('listening', (_worker, address) => {
    if (announced) return;
    announced = true;
    const host = config.host;
    logger.info({ url: `http://${host}:${address.port}`, workers }, 'Gammaline is listening');
    console.log(`Gammaline (${workers} workers): console http://${host}:${address.port}/  ·  API reference http://${host}:${address.port}/docs`);
  });
  for (let i = 0; i < workers; i++) fork();

  onStopSignal(async (signal) => {
    if (stopping) return;
    stopping = true;
    logger.info({ signal }, 'stopping the workers');
    clearInterval(pruneTimer);
    const running = Object.values(cluster.workers ?? {}).filter((w): w is Worker => w !== undefined && !w.isDead());
    await Promise.all(
      running.map(
        (worker) =>
          new Promise<void>((resolve) => {
            const kill = setTimeout(() => worker.process.kill('SIGKILL'), STOP_GRACE_MS).unref();
            worker.once('exit', () => {
              clearTimeout(kill);
              resolve();
            });
            // A terminal's Ctrl-C already reached the workers; a second SIGTERM is harmless.
            worker.process.kill('SIGTERM');
          }),
      ),
    );
    await capture?.close().catch(() => {});
    await database.close().catch(() => {});
    process.exit(0);
  });
}

const config = loadConfig();
const logger = pino({ level: config.logLevel });
const workers = workerCount();
if (cluster.isPrimary && workers > 1) await runPrimary(config, logger, workers);
else await runServer(config, logger, { prepare: cluster.isPrimary });
