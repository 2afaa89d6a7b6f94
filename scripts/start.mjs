// `npm start`: installs what is missing, starts PostgreSQL on loopback (unless DATABASE_URL is set),
// builds the console and serves API + console + docs from one server process, which it restarts after
// a crash without touching the database. Ctrl-C (or SIGTERM, SIGHUP) stops everything it started.
//
// Files in the data folder (`.data`, or GAMMALINE_DATA_DIR):
//   pg/            the PostgreSQL cluster
//   pg-port        the port PostgreSQL used last; reused while it is free, so other clients keep their URL
//   database-url   while running: the database URL, for `npm run keys` and for a second instance
//   server.pid     while running: the process id of the current server process (only when we run the database)
// GAMMALINE_SKIP_WEB_BUILD=1 serves whatever web/dist holds instead of building the console first.
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { ensureDebianPackages, ensureNodeModules } from './lib/bootstrap.mjs';
import { runOrThrow, say } from './lib/run.mjs';
import { superviseServer } from './lib/supervise.mjs';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
process.chdir(root);
const dataDir = path.resolve(root, process.env.GAMMALINE_DATA_DIR || '.data');
const files = {
  cluster: path.join(dataDir, 'pg'),
  pgPort: path.join(dataDir, 'pg-port'),
  databaseUrl: path.join(dataDir, 'database-url'),
  serverPid: path.join(dataDir, 'server.pid'),
};

let cluster;
let supervisor;
let stopRequested = false;

// Until the server runs, a stop request is noticed between the steps; afterwards it stops the server,
// and the code after `supervisor.done` stops the database. The terminal's Ctrl-C reaches the server too.
for (const signal of ['SIGINT', 'SIGTERM', 'SIGHUP']) {
  process.on(signal, () => {
    if (stopRequested) return;
    stopRequested = true;
    if (supervisor) say(`${signal}: stopping the server and the database…`);
    void supervisor?.stop();
  });
}

/** The port PostgreSQL had last time, if one was recorded. */
function recordedPgPort() {
  if (!existsSync(files.pgPort)) return undefined;
  const port = Number(readFileSync(files.pgPort, 'utf8').trim());
  return Number.isInteger(port) && port > 0 && port < 65536 ? port : undefined;
}

function tidyUp() {
  if (cluster) {
    rmSync(files.serverPid, { force: true });
    rmSync(files.databaseUrl, { force: true });
  }
  cluster?.stop();
  cluster = undefined;
}

function stopIfRequested() {
  if (!stopRequested) return;
  tidyUp();
  process.exit(0);
}

try {
  ensureNodeModules(root);
  stopIfRequested();
  const env = { ...process.env };
  mkdirSync(dataDir, { recursive: true });
  if (!env.DATABASE_URL) {
    ensureDebianPackages(['postgresql']);
    const { startCluster, ensureDatabase } = await import('./lib/postgres.mjs');
    cluster = await startCluster({ dataDir: files.cluster, preferredPort: recordedPgPort() });
    writeFileSync(files.pgPort, `${cluster.port}\n`);
    stopIfRequested();
    ensureDatabase(cluster.port, 'gammaline');
    env.DATABASE_URL = `postgres://postgres@127.0.0.1:${cluster.port}/gammaline`;
    // Operator tools (npm run keys) and a second instance find the running database here.
    writeFileSync(files.databaseUrl, `${env.DATABASE_URL}\n`);
  } else {
    say('using the PostgreSQL at DATABASE_URL');
  }
  if (env.GAMMALINE_SKIP_WEB_BUILD === '1') {
    say('not building the console (GAMMALINE_SKIP_WEB_BUILD=1)');
  } else if (existsSync(path.join(root, 'web', 'vite.config.ts'))) {
    say('building the console…');
    runOrThrow(process.execPath, [path.join(root, 'node_modules', 'vite', 'bin', 'vite.js'), 'build', '--config', 'web/vite.config.ts', '--logLevel', 'warn'], { env });
  }
  stopIfRequested();
  supervisor = superviseServer({
    command: process.execPath,
    args: ['--import', 'tsx', 'server/index.ts'],
    env,
    // Only beside our own database: a second instance (DATABASE_URL set) must not overwrite the first's.
    onStart: (pid) => cluster && writeFileSync(files.serverPid, `${pid}\n`),
  });
  const code = await supervisor.done;
  tidyUp();
  process.exit(code);
} catch (err) {
  console.error(`[gammaline] ${err instanceof Error ? err.message : String(err)}`);
  tidyUp();
  process.exit(1);
}
