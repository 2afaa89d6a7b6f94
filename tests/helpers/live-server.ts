import { spawn, type ChildProcess } from 'node:child_process';
import { Agent, request, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Express } from 'express';
import { createAppServer } from '../../server/http/app-server.ts';

/** Keep-alive sockets shared by every `send`: enough for the widest pool a test runs (inPool / inPoolFrom). */
const agent = new Agent({ keepAlive: true, maxSockets: 64 });
const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');

/** What one request came back with; `timedOut` instead of a status when the server never answered. */
export interface Answer {
  status: number;
  contentType: string;
  headers: Headers;
  text: string;
  timedOut?: boolean;
}

export interface HostileRequest {
  method: string;
  path: string;
  headers?: Record<string, string>;
  body?: string | Uint8Array;
  /**
   * Sends the body with chunked transfer coding instead of a Content-Length, so the server can only
   * find out its size by reading it (and reads what it refuses to the end on a kept-alive connection).
   */
  chunked?: boolean;
  /**
   * Declares this Content-Length and sends no body at all: the server must answer from the
   * declaration alone. (A server that refuses a declared size closes the connection after its answer;
   * a client still pushing megabytes then races that close and may never read the answer.)
   */
  declaredLength?: number;
}

/**
 * One real HTTP server on loopback for a whole test file: thousands of requests through supertest
 * would each open a socket, while fetch keeps its connections alive.
 */
export async function listen(app: Express): Promise<{ server: Server; base: string; close(): Promise<void> }> {
  const server = createAppServer(app);
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const { port } = server.address() as AddressInfo;
  return {
    server,
    base: `http://127.0.0.1:${port}`,
    close: () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
}

/**
 * Sends one request with a deadline: a server that does not answer in `timeoutMs` is a hang.
 * node:http with a keep-alive agent, because fetch costs three times as much per request here.
 */
export function send(base: string, req: HostileRequest, timeoutMs = 10_000): Promise<Answer> {
  const url = new URL(base + req.path);
  return new Promise<Answer>((resolve, reject) => {
    let answered = false;
    const outgoing = request(
      { agent, host: url.hostname, port: url.port, path: url.pathname + url.search, method: req.method, headers: req.headers, timeout: timeoutMs },
      (res) => {
        answered = true;
        const chunks: Buffer[] = [];
        res.on('data', (c: Buffer) => chunks.push(c));
        res.on('error', reject);
        res.on('end', () => {
          // A request whose body was only declared can never complete; its socket is not reusable.
          if (req.declaredLength !== undefined) outgoing.destroy();
          const headers = new Headers();
          for (const [k, v] of Object.entries(res.headers)) if (v !== undefined) headers.set(k, Array.isArray(v) ? v.join(', ') : v);
          resolve({ status: res.statusCode ?? 0, contentType: res.headers['content-type'] ?? '', headers, text: Buffer.concat(chunks).toString('utf8') });
        });
      },
    );
    outgoing.on('timeout', () => {
      outgoing.destroy();
      if (!answered) resolve({ status: 0, contentType: '', headers: new Headers(), text: '', timedOut: true });
    });
    // A server may answer (413) and close before the whole body is written; the answer is what counts.
    outgoing.on('error', (err: NodeJS.ErrnoException) => {
      if (!answered) resolve({ status: 0, contentType: '', headers: new Headers(), text: `connection error ${err.code ?? err.message}` });
    });
    if (req.declaredLength !== undefined) {
      outgoing.setHeader('content-length', String(req.declaredLength));
      outgoing.flushHeaders();
    } else if (req.chunked) {
      outgoing.setHeader('transfer-encoding', 'chunked');
      outgoing.end(req.body);
    } else {
      outgoing.end(req.body);
    }
  });
}

/** Runs `work` over `items` with at most `inFlight` at once, keeping the answers in order. */
export async function inPool<T, R>(items: readonly T[], inFlight: number, work: (item: T, index: number) => Promise<R>): Promise<R[]> {
  const results = new Array<R>(items.length);
  let next = 0;
  async function worker(): Promise<void> {
    while (next < items.length) {
      const i = next++;
      results[i] = await work(items[i]!, i);
    }
  }
  await Promise.all(Array.from({ length: Math.min(inFlight, items.length) }, worker));
  return results;
}

/**
 * Like inPool, for items made on demand: pulls from `items` only when a slot is free, so a generator
 * can produce tens of thousands of bodies without holding them all. Keeps no results.
 */
export async function inPoolFrom<T>(items: Iterable<T>, inFlight: number, work: (item: T) => Promise<void>): Promise<number> {
  const it = items[Symbol.iterator]();
  let done = false;
  let count = 0;
  async function worker(): Promise<void> {
    while (!done) {
      const next = it.next();
      if (next.done) {
        done = true;
        return;
      }
      count++;
      await work(next.value);
    }
  }
  await Promise.all(Array.from({ length: inFlight }, worker));
  return count;
}

/** A real server process (`node --import tsx server/index.ts`, as `npm start` runs it) on loopback. */
export interface ServerProcess {
  base: string;
  pid: number;
  child: ChildProcess;
  /** Resolves when the process has ended, with how it ended. */
  exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
  /** SIGKILL (kill -9): no shutdown code runs, as in a power cut or the OOM killer. Resolves once it is gone. */
  kill(): Promise<void>;
  /** SIGTERM, the graceful stop; SIGKILL after `graceMs`. */
  stop(graceMs?: number): Promise<void>;
  /** What the process wrote to stdout and stderr (the last 64 KB), for failure messages. */
  output(): string;
}

/**
 * Starts server/index.ts as its own process on `databaseUrl` (local mode: it migrates, seeds the demo
 * organisation if missing and captures mail), waits until /readyz answers 200 and returns its base URL.
 * `env` adds or overrides variables (LOG_LEVEL defaults to silent).
 */
export async function startServerProcess(options: { databaseUrl: string; env?: Record<string, string>; readyWithinMs?: number }): Promise<ServerProcess> {
  const child = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], {
    cwd: ROOT,
    env: { ...process.env, NODE_ENV: 'development', HOST: '127.0.0.1', PORT: '0', LOG_LEVEL: 'silent', WORKERS: '1', SHED_EVENT_LOOP_DELAY_MS: '0', SHED_MAX_IN_FLIGHT: '0', ...options.env, DATABASE_URL: options.databaseUrl },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let output = '';
  const keep = (c: Buffer) => {
    output = (output + c.toString('utf8')).slice(-64 * 1024);
  };
  child.stdout!.on('data', keep);
  child.stderr!.on('data', keep);
  const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((resolve) => child.once('exit', (code, signal) => resolve({ code, signal })));
  let gone = false;
  // A test run that ends without stopping it (a crash, a timeout) must not leave it running.
  const reap = () => child.kill('SIGKILL');
  process.once('exit', reap);
  void exited.then(() => {
    gone = true;
    process.off('exit', reap);
  });
  const kill = async () => {
    if (!gone) child.kill('SIGKILL');
    await exited;
  };

  const deadline = Date.now() + (options.readyWithinMs ?? 60_000);
  let base: string | undefined;
  let ready = false;
  try {
    while (!ready && Date.now() < deadline) {
      if (gone) throw new Error(`the server process exited before it was ready:\n${output}`);
      base ??= /Gammaline(?: \(\d+ workers\))?: console (http:\/\/[\d.]+:\d+)\//.exec(output)?.[1];
      if (base) {
        ready = (await send(base, { method: 'GET', path: '/readyz' }, 2_000)).status === 200;
      }
      if (!ready) await new Promise((r) => setTimeout(r, 100));
    }
    if (!base || !ready) throw new Error(`the server process was not ready within ${options.readyWithinMs ?? 60_000} ms:\n${output}`);
  } catch (err) {
    await kill();
    throw err;
  }
  return {
    base,
    pid: child.pid!,
    child,
    exited,
    kill,
    stop: async (graceMs = 10_000) => {
      if (gone) return;
      child.kill('SIGTERM');
      const timer = setTimeout(() => child.kill('SIGKILL'), graceMs);
      await exited;
      clearTimeout(timer);
    },
    output: () => output,
  };
}

/** Signs in over HTTP and returns the headers a console caller sends on writes (cookie and CSRF token). */
export async function consoleHeaders(base: string, email: string, password: string): Promise<Record<string, string>> {
  const res = await fetch(`${base}/api/v1/session`, {
    method: 'POST',
    headers: { 'content-type': 'application/json' },
    body: JSON.stringify({ email, password }),
  });
  if (res.status !== 200) throw new Error(`sign-in as ${email} failed with ${res.status}: ${await res.text()}`);
  const cookie = res.headers.getSetCookie()[0]!.split(';')[0]!;
  const { csrfToken } = (await res.json()) as { csrfToken: string };
  return { cookie, 'x-csrf-token': csrfToken };
}
