// Starts the console and API the way `npm start` does (scripts/start.mjs builds the console, then
// serves everything from one process) on a fresh database copied from the run's migrated template.
import { spawn, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { createServer } from 'node:net';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import pg from 'pg';
import type { TestProject } from 'vitest/node';

declare module 'vitest' {
  export interface ProvidedContext {
    /** Origin of the running server, or '' when the e2e tests are skipped. */
    baseUrl: string;
  }
}

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
/** start.mjs builds the console before listening; on two cores that takes a while. */
const READY_TIMEOUT_MS = 120_000;

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

async function withAdmin<T>(serverUrl: string, work: (client: pg.Client) => Promise<T>): Promise<T> {
  const client = new pg.Client({ connectionString: `${serverUrl}/postgres` });
  await client.connect();
  try {
    return await work(client);
  } finally {
    await client.end();
  }
}

async function waitForReady(url: string, child: ChildProcess, output: () => string): Promise<void> {
  const deadline = Date.now() + READY_TIMEOUT_MS;
  while (Date.now() < deadline) {
    if (child.exitCode !== null) throw new Error(`the server exited with ${child.exitCode} before it was ready:\n${output()}`);
    try {
      const response = await fetch(`${url}/readyz`);
      if (response.ok) return;
    } catch {
      // Not listening yet.
    }
    await new Promise((resolve) => setTimeout(resolve, 250));
  }
  throw new Error(`the server was not ready within ${READY_TIMEOUT_MS / 1000} s:\n${output()}`);
}

export default async function setup(project: TestProject): Promise<(() => Promise<void>) | undefined> {
  const serverUrl = process.env.TEST_PG_SERVER_URL;
  const template = process.env.TEST_PG_TEMPLATE;
  if (!serverUrl || !template) {
    console.warn(
      '\n[e2e] skipped: the browser tests need the PostgreSQL cluster that `npm test` starts. Run them with `npm test -- --project e2e`.\n',
    );
    project.provide('baseUrl', '');
    return undefined;
  }

  const database = `e2e_${randomBytes(6).toString('hex')}`;
  await withAdmin(serverUrl, (c) => c.query(`create database ${database} template ${template}`));
  const port = await freePort();
  const baseUrl = `http://127.0.0.1:${port}`;
  let log = '';
  const child = spawn(process.execPath, [path.join(root, 'scripts', 'start.mjs')], {
    cwd: root,
    env: { ...process.env, DATABASE_URL: `${serverUrl}/${database}`, PORT: String(port), HOST: '127.0.0.1', LOG_LEVEL: 'warn', SHED_EVENT_LOOP_DELAY_MS: '0', SHED_MAX_IN_FLIGHT: '0' },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  const keep = (chunk: Buffer) => {
    log = (log + chunk.toString()).slice(-20_000);
  };
  child.stdout?.on('data', keep);
  child.stderr?.on('data', keep);
  const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));

  async function stop(): Promise<void> {
    if (child.exitCode === null && child.signalCode === null) {
      child.kill('SIGTERM');
      const timer = setTimeout(() => child.kill('SIGKILL'), 15_000);
      await exited;
      clearTimeout(timer);
    }
    await withAdmin(serverUrl!, (c) => c.query(`drop database if exists ${database} with (force)`)).catch(() => undefined);
  }

  try {
    await waitForReady(baseUrl, child, () => log);
  } catch (error) {
    await stop();
    throw error;
  }
  project.provide('baseUrl', baseUrl);
  return async () => {
    await stop();
    if (log.trim()) console.log(`[e2e] server output (warnings and errors):\n${log.trim()}`);
  };
}
