import { spawn, type ChildProcess } from 'node:child_process';
import { chmodSync, existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { createServer, type Server } from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { consoleHeaders, send } from '../helpers/live-server.ts';

// `npm start` (scripts/start.mjs) as a developer runs it, with its own PostgreSQL cluster, in a
// temporary data folder (GAMMALINE_DATA_DIR) and without the console build (GAMMALINE_SKIP_WEB_BUILD):
// a kill -9 of the server process is followed by a restart on the same port and the same database,
// which never stops meanwhile; Ctrl-C (SIGINT) stops both and removes .data/database-url; the next
// start finds PostgreSQL on the port it had, or on another one, said out loud, when that one is taken.
// Every wait is bounded; nothing asserts a duration.

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
/** The demo admin the server seeds by default (DEMO_ADMIN_EMAIL / DEMO_ADMIN_PASSWORD unset). */
const ADMIN = { email: 'admin@kestrel-ridge.example', password: 'gammaline-demo-2026' };
/** A first start creates the cluster, migrates and seeds; two shared cores make that slow. */
const FIRST_READY_MS = 150_000;
const READY_MS = 90_000;
const STOP_MS = 40_000;

interface Launcher {
  child: ChildProcess;
  exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
  output(): string;
}

let dataDir: string;
let serverPort: number;
let base: string;
const launchers: Launcher[] = [];

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = createServer();
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => {
      const address = server.address();
      const port = typeof address === 'object' && address ? address.port : 0;
      server.close(() => resolve(port));
    });
  });
}

function startLauncher(): Launcher {
  const env: NodeJS.ProcessEnv = {
    ...process.env,
    GAMMALINE_DATA_DIR: dataDir,
    GAMMALINE_SKIP_WEB_BUILD: '1',
    NODE_ENV: 'development',
    HOST: '127.0.0.1',
    PORT: String(serverPort),
    LOG_LEVEL: 'warn',
    WORKERS: '1',
  };
  // `npm test` points DATABASE_URL at its template; unset, the launcher runs its own cluster.
  delete env.DATABASE_URL;
  const child = spawn(process.execPath, [path.join(ROOT, 'scripts', 'start.mjs')], { cwd: ROOT, env, stdio: ['ignore', 'pipe', 'pipe'] });
  let output = '';
  const keep = (chunk: Buffer) => {
    output = (output + chunk.toString('utf8')).slice(-64 * 1024);
  };
  child.stdout!.on('data', keep);
  child.stderr!.on('data', keep);
  const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((resolve) => child.once('exit', (code, signal) => resolve({ code, signal })));
  const launcher = { child, exited, output: () => output };
  launchers.push(launcher);
  return launcher;
}

function isRunning(launcher: Launcher): boolean {
  return launcher.child.exitCode === null && launcher.child.signalCode === null;
}

/** Whether a process is alive; a zombie (dead, not yet reaped by a container's init) counts as gone. */
function alive(pid: number): boolean {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    return stat.slice(stat.lastIndexOf(')') + 2)[0] !== 'Z';
  } catch {
    return false;
  }
}

function readData(name: string): string | undefined {
  const file = path.join(dataDir, name);
  return existsSync(file) ? readFileSync(file, 'utf8').trim() : undefined;
}

/** The postmaster's process id, from the first line of postmaster.pid, while the cluster runs. */
function postmasterPid(): number | undefined {
  const text = readData(path.join('pg', 'postmaster.pid'));
  return text ? Number(text.split('\n')[0]) : undefined;
}

async function waitFor(what: string, launcher: Launcher, timeoutMs: number, check: () => boolean | Promise<boolean>): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    if (await check()) return;
    await new Promise((resolve) => setTimeout(resolve, 100));
  }
  throw new Error(`${what}: not within ${timeoutMs / 1000} s. Launcher output:\n${launcher.output()}`);
}

async function ready(): Promise<boolean> {
  return (await send(base, { method: 'GET', path: '/readyz' }, 2_000)).status === 200;
}

async function stopWithCtrlC(launcher: Launcher): Promise<{ code: number | null; signal: NodeJS.Signals | null }> {
  launcher.child.kill('SIGINT');
  const timeout = new Promise<never>((_, reject) =>
    setTimeout(() => reject(new Error(`the launcher did not stop within ${STOP_MS / 1000} s:\n${launcher.output()}`)), STOP_MS).unref(),
  );
  return Promise.race([launcher.exited, timeout]);
}

beforeAll(async () => {
  dataDir = mkdtempSync(path.join(os.tmpdir(), 'gammaline-start-'));
  // mkdtemp makes a 0700 folder; as root, PostgreSQL runs as the postgres user, which must traverse it.
  chmodSync(dataDir, 0o755);
  serverPort = await freePort();
  base = `http://127.0.0.1:${serverPort}`;
});

afterAll(async () => {
  for (const launcher of launchers) {
    if (!isRunning(launcher)) continue;
    await stopWithCtrlC(launcher).catch(() => {
      launcher.child.kill('SIGKILL');
    });
  }
  // Whatever a failed test left behind: the server process and the cluster (SIGINT = PostgreSQL's fast shutdown).
  const serverPid = Number(readData('server.pid'));
  if (serverPid && alive(serverPid)) process.kill(serverPid, 'SIGKILL');
  const postmaster = postmasterPid();
  if (postmaster && alive(postmaster)) {
    process.kill(postmaster, 'SIGINT');
    for (let i = 0; i < 100 && alive(postmaster); i++) await new Promise((resolve) => setTimeout(resolve, 100));
  }
  if (dataDir) rmSync(dataDir, { recursive: true, force: true });
}, 60_000);

describe('npm start', () => {
  let first: Launcher;
  let databaseUrl: string;
  let pgPort: number;
  let session: Record<string, string>;

  it('starts PostgreSQL in the data folder and serves on PORT', async () => {
    first = startLauncher();
    await waitFor('the server answers /readyz', first, FIRST_READY_MS, () => {
      if (!isRunning(first)) throw new Error(`the launcher exited:\n${first.output()}`);
      return ready();
    });
    pgPort = Number(readData('pg-port'));
    databaseUrl = readData('database-url')!;
    expect(databaseUrl).toBe(`postgres://postgres@127.0.0.1:${pgPort}/gammaline`);
    expect(postmasterPid()).toBeGreaterThan(0);
    expect(alive(Number(readData('server.pid')))).toBe(true);
    // A console session lives in PostgreSQL: it outlasts a server process only if the database does.
    session = await consoleHeaders(base, ADMIN.email, ADMIN.password);
  }, FIRST_READY_MS + 30_000);

  it('restarts a killed server on the same port without stopping the database', async () => {
    const postmaster = postmasterPid()!;
    // Watch the database's traces the whole time: the URL file and the postmaster never change.
    const seen = new Set<string>();
    const watch = setInterval(() => seen.add(`${readData('database-url')} · ${postmasterPid()}`), 25);
    try {
      for (const expectedDelay of ['1', '2']) {
        const killed = Number(readData('server.pid'));
        process.kill(killed, 'SIGKILL');
        await waitFor('a new server answers /readyz', first, READY_MS, async () => {
          const current = Number(readData('server.pid'));
          return current !== killed && alive(current) && (await ready());
        });
        expect(alive(killed)).toBe(false);
        // The delay doubles while the server keeps crashing soon after it started.
        expect(first.output()).toContain(`server was killed by SIGKILL; restarting in ${expectedDelay} s`);
      }
    } finally {
      clearInterval(watch);
    }
    expect([...seen]).toEqual([`${databaseUrl} · ${postmaster}`]);
    expect(isRunning(first)).toBe(true);
    const answer = await fetch(`${base}/api/v1/session`, { headers: session });
    expect(answer.status).toBe(200);
    expect(JSON.stringify(await answer.json())).toContain(ADMIN.email);
  }, 2 * READY_MS + 30_000);

  it('stops the server and the database on Ctrl-C and removes database-url', async () => {
    const serverPid = Number(readData('server.pid'));
    const postmaster = postmasterPid()!;
    const { code } = await stopWithCtrlC(first);
    expect(code).toBe(0);
    expect(alive(serverPid)).toBe(false);
    expect(alive(postmaster)).toBe(false);
    expect(postmasterPid()).toBeUndefined();
    expect(readData('database-url')).toBeUndefined();
    expect(readData('server.pid')).toBeUndefined();
    expect(await ready()).toBe(false);
  }, STOP_MS + 10_000);

  it('starts PostgreSQL on the port it had last time, and ends with a server that stops by itself', async () => {
    const again = startLauncher();
    await waitFor('the server answers /readyz again', again, READY_MS, () => {
      if (!isRunning(again)) throw new Error(`the launcher exited:\n${again.output()}`);
      return ready();
    });
    expect(readData('database-url')).toBe(databaseUrl);
    expect(Number(readData('pg-port'))).toBe(pgPort);

    // SIGTERM straight to the server: its graceful stop exits 0, which is not a crash.
    const postmaster = postmasterPid()!;
    process.kill(Number(readData('server.pid')), 'SIGTERM');
    await waitFor('the launcher ends', again, STOP_MS, () => !isRunning(again));
    expect((await again.exited).code).toBe(0);
    expect(again.output()).toContain('the server stopped by itself');
    expect(again.output()).not.toContain('restarting');
    expect(alive(postmaster)).toBe(false);
    expect(readData('database-url')).toBeUndefined();
  }, READY_MS + STOP_MS + 10_000);

  it('moves PostgreSQL to a free port, and says so, when its port is taken', async () => {
    const blocker: Server = createServer();
    await new Promise<void>((resolve) => blocker.listen(pgPort, '127.0.0.1', resolve));
    try {
      const moved = startLauncher();
      await waitFor('the server answers /readyz on a moved database', moved, READY_MS, () => {
        if (!isRunning(moved)) throw new Error(`the launcher exited:\n${moved.output()}`);
        return ready();
      });
      const newPort = Number(readData('pg-port'));
      expect(newPort).not.toBe(pgPort);
      expect(moved.output()).toContain(`127.0.0.1:${pgPort}, PostgreSQL's port last time, is taken by another program; using ${newPort} instead`);
      expect(readData('database-url')).toBe(`postgres://postgres@127.0.0.1:${newPort}/gammaline`);
      expect((await stopWithCtrlC(moved)).code).toBe(0);
    } finally {
      await new Promise<void>((resolve) => blocker.close(() => resolve()));
    }
  }, READY_MS + STOP_MS + 10_000);
});
