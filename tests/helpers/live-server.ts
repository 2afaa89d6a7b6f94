import { Agent, createServer, request, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import type { Express } from 'express';

const agent = new Agent({ keepAlive: true, maxSockets: 16 });

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
}

/**
 * One real HTTP server on loopback for a whole test file: thousands of requests through supertest
 * would each open a socket, while fetch keeps its connections alive.
 */
export async function listen(app: Express): Promise<{ server: Server; base: string; close(): Promise<void> }> {
  const server = createServer(app);
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
    outgoing.end(req.body);
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
