import { chmodSync, chownSync, existsSync, mkdirSync, readFileSync } from 'node:fs';
import net from 'node:net';
import path from 'node:path';
import { findPostgresBin } from './bootstrap.mjs';
import { capture, isRoot, runOrThrow, say } from './run.mjs';

/** Whether nothing listens on `port` of 127.0.0.1 right now (a listener on 0.0.0.0 counts as taken). */
export function isPortFree(port) {
  return new Promise((resolve) => {
    const server = net.createServer();
    server.once('error', () => resolve(false));
    server.listen(port, '127.0.0.1', () => server.close(() => resolve(true)));
  });
}

/** Finds a free TCP port on loopback (never assumes the system's 5432 is ours). */
export function freePort() {
  return new Promise((resolve, reject) => {
    const server = net.createServer();
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => {
      const { port } = server.address();
      server.close(() => resolve(port));
    });
  });
}

function postgresUid() {
  const uid = capture('id', ['-u', 'postgres']);
  const gid = capture('id', ['-g', 'postgres']);
  if (!uid || !gid) throw new Error('The postgres system user is missing; reinstall the postgresql package.');
  return { uid: Number(uid), gid: Number(gid) };
}

/** initdb and pg_ctl refuse to run as root, so as root they run as the postgres user. */
function asClusterOwner(bin, args, options = {}) {
  if (isRoot) return runOrThrow('runuser', ['-u', 'postgres', '--', bin, ...args], options);
  return runOrThrow(bin, args, options);
}

function clusterStatus(pgBin, dataDir) {
  const args = ['status', '-D', dataDir];
  const out = isRoot ? capture('runuser', ['-u', 'postgres', '--', `${pgBin}/pg_ctl`, ...args]) : capture(`${pgBin}/pg_ctl`, args);
  return out !== undefined && /server is running/.test(out);
}

/** The port a running cluster listens on, from line 4 of postmaster.pid. */
function runningPort(dataDir) {
  const lines = readFileSync(path.join(dataDir, 'postmaster.pid'), 'utf8').split('\n');
  return Number(lines[3]);
}

/**
 * The port to start on: `preferredPort` while it is free (so clients that remember it keep working),
 * otherwise any free one, said out loud because those clients then need the new URL.
 */
async function choosePort(preferredPort) {
  if (preferredPort === undefined) return freePort();
  if (await isPortFree(preferredPort)) return preferredPort;
  const port = await freePort();
  say(`127.0.0.1:${preferredPort}, PostgreSQL's port last time, is taken by another program; using ${port} instead`);
  return port;
}

/**
 * Starts (initialising if needed) a PostgreSQL cluster in `dataDir` on 127.0.0.1, on `preferredPort`
 * when given and free, otherwise on a free port. `throwaway` turns durability off, for test runs only.
 * Returns the port and a stop function.
 */
export async function startCluster({ dataDir, throwaway = false, preferredPort }) {
  const pgBin = findPostgresBin();
  if (!pgBin) throw new Error('PostgreSQL server binaries were not found under /usr/lib/postgresql.');
  mkdirSync(dataDir, { recursive: true });
  if (isRoot) {
    const { uid, gid } = postgresUid();
    chownSync(dataDir, uid, gid);
    chmodSync(dataDir, 0o700);
    const reachable = capture('runuser', ['-u', 'postgres', '--', 'test', '-w', dataDir]) !== undefined;
    if (!reachable) {
      throw new Error(
        `PostgreSQL runs as the postgres user, which cannot reach ${dataDir}. Make its parent folders traversable ` +
          `(chmod o+x on each) or set DATABASE_URL to an existing PostgreSQL.`,
      );
    }
  }
  if (!existsSync(path.join(dataDir, 'PG_VERSION'))) {
    say(`creating a PostgreSQL cluster in ${dataDir}…`);
    asClusterOwner(`${pgBin}/initdb`, ['-D', dataDir, '-U', 'postgres', '--auth=trust', '-E', 'UTF8', '--locale=C.UTF-8'], { stdio: 'ignore' });
  }
  if (clusterStatus(pgBin, dataDir)) {
    const port = runningPort(dataDir);
    say(`reusing the PostgreSQL cluster already running on 127.0.0.1:${port}`);
    return { port, stop: () => stopCluster(pgBin, dataDir) };
  }
  const port = await choosePort(preferredPort);
  const options = [`-h 127.0.0.1`, `-p ${port}`, `-k ${dataDir}`];
  if (throwaway) options.push('-c fsync=off', '-c synchronous_commit=off', '-c full_page_writes=off');
  asClusterOwner(`${pgBin}/pg_ctl`, ['-D', dataDir, '-l', path.join(dataDir, 'server.log'), '-w', '-t', '60', '-o', options.join(' '), 'start'], {
    stdio: 'ignore',
  });
  say(`PostgreSQL is running on 127.0.0.1:${port}`);
  return { port, stop: () => stopCluster(pgBin, dataDir) };
}

function stopCluster(pgBin, dataDir) {
  if (!clusterStatus(pgBin, dataDir)) return;
  try {
    asClusterOwner(`${pgBin}/pg_ctl`, ['-D', dataDir, '-m', 'fast', '-w', '-t', '60', 'stop'], { stdio: 'ignore' });
    say('PostgreSQL stopped');
  } catch (err) {
    console.error(`[gammaline] could not stop PostgreSQL: ${err.message}`);
  }
}

/** Creates a database when it does not exist yet. */
export function ensureDatabase(port, name) {
  const pgBin = findPostgresBin();
  const conn = ['-h', '127.0.0.1', '-p', String(port), '-U', 'postgres'];
  const exists = capture(`${pgBin}/psql`, [...conn, '-d', 'postgres', '-tAc', `select 1 from pg_database where datname = '${name}'`]);
  if (exists === '1') return;
  runOrThrow(`${pgBin}/createdb`, [...conn, name]);
}
