// An evenly paced load generator for latency figures: requests fall due at a steady rate and go out
// over a fixed set of keep-alive connections as raw, pre-built HTTP/1.1 requests. Node's own HTTP
// client cost about as much CPU per request as the server under test, on the same two cores; this
// one does next to nothing per request, so the latencies it reports are the server's and the
// machine's, not the generator's. Answers must carry Content-Length (every bench route does).
import net from 'node:net';

export interface PacedResult {
  /** ms from each request's due time to the end of its answer (a late start counts). */
  latencies: number[];
  /** ms each request left after its due time (the generator's own lateness). */
  lateness: number[];
  /** Non-200 answers and broken connections, described. */
  failures: string[];
  /** Due time (ms from the end of the lead-in) of every request, in the order of `latencies`. */
  dueAt: number[];
}

/** Answers still missing this long after the last request fell due are counted failed (a hung server must not hang the bench). */
const ANSWER_DEADLINE_MS = 10_000;

interface Connection {
  socket: net.Socket;
  busyDue: number | undefined;
  received: Buffer[];
  receivedBytes: number;
  /** Bytes of the current answer (headers and body) once its headers are in. */
  answerBytes: number | undefined;
  status: number;
}

/**
 * Sends `rate` requests per second for `leadInSeconds + seconds` seconds and reports the requests due
 * after the lead-in: steady-state latency, once the load has been running for a while (a key that sat
 * idle first waits for a quota lease, and the generator's own code is compiled meanwhile).
 */
export async function pacedLoad(
  url: string,
  body: string,
  headers: Record<string, string>,
  options: { rate: number; seconds: number; connections: number; leadInSeconds: number; answerDeadlineMs?: number },
): Promise<PacedResult> {
  const { rate, seconds, connections, leadInSeconds, answerDeadlineMs = ANSWER_DEADLINE_MS } = options;
  const target = new URL(url);
  const extra = Object.entries({ 'content-type': 'application/json', ...headers })
    .map(([k, v]) => `${k}: ${v}\r\n`)
    .join('');
  const request = Buffer.from(`POST ${target.pathname} HTTP/1.1\r\nHost: ${target.host}\r\n${extra}Content-Length: ${Buffer.byteLength(body)}\r\n\r\n${body}`);
  const total = Math.round(rate * (leadInSeconds + seconds));
  const measuredFromMs = leadInSeconds * 1000;
  const result: PacedResult = { latencies: [], lateness: [], failures: [], dueAt: [] };
  const pending: number[] = [];
  const free: Connection[] = [];
  let started = 0;
  let finished = 0;
  let live = connections;
  let gaveUp = false;
  let allDone!: () => void;
  const done = new Promise<void>((resolve) => (allDone = resolve));

  const complete = (c: Connection, failure?: string) => {
    const due = c.busyDue!;
    // Failures count whenever they happen; latencies only after the lead-in.
    if (failure) result.failures.push(failure);
    if (failure || due - started >= measuredFromMs) {
      result.latencies.push(failure ? Number.POSITIVE_INFINITY : performance.now() - due);
      result.dueAt.push(due - started - measuredFromMs);
    }
    c.busyDue = undefined;
    c.received = [];
    c.receivedBytes = 0;
    c.answerBytes = undefined;
    finished++;
    if (finished === total) allDone();
    else if (!c.socket.destroyed) send(c);
  };

  const send = (c: Connection) => {
    const due = pending.shift();
    if (due === undefined) {
      free.push(c);
      return;
    }
    c.busyDue = due;
    if (due - started >= measuredFromMs) result.lateness.push(performance.now() - due);
    c.socket.write(request);
  };

  const onData = (c: Connection, chunk: Buffer) => {
    c.received.push(chunk);
    c.receivedBytes += chunk.length;
    if (c.answerBytes === undefined) {
      const head = Buffer.concat(c.received);
      c.received = [head];
      const end = head.indexOf('\r\n\r\n');
      if (end === -1) return;
      const text = head.subarray(0, end).toString('latin1');
      c.status = Number(text.slice(9, 12));
      const length = /\r\ncontent-length: *(\d+)/i.exec(text);
      if (!length) {
        c.socket.destroy();
        complete(c, `${url}: an answer without Content-Length`);
        return;
      }
      c.answerBytes = end + 4 + Number(length[1]);
    }
    if (c.receivedBytes < c.answerBytes) return;
    const failure = c.status === 200 ? undefined : `${c.status}: ${Buffer.concat(c.received).toString('utf8').slice(0, 300)}`;
    complete(c, failure);
  };

  const made: Connection[] = [];
  const opening = Promise.all(
    Array.from(
      { length: connections },
      () =>
        new Promise<Connection>((resolve, reject) => {
          const socket = net.connect({ host: target.hostname, port: Number(target.port) }, () => resolve(c));
          const c: Connection = { socket, busyDue: undefined, received: [], receivedBytes: 0, answerBytes: undefined, status: 0 };
          socket.setNoDelay(true);
          socket.on('data', (chunk: Buffer) => onData(c, chunk));
          socket.on('error', reject);
          made.push(c);
          socket.on('close', () => {
            live--;
            if (c.busyDue !== undefined) complete(c, gaveUp ? `${url}: no answer ${answerDeadlineMs / 1000} s after the last request was due` : `${url}: the connection closed during a request`);
            const idle = free.indexOf(c);
            if (idle !== -1) free.splice(idle, 1);
            // With no connection left, whatever has not been answered never will be: count it failed.
            if (live === 0 && finished < total) {
              const lost = total - finished;
              for (let i = 0; i < lost; i++) {
                result.latencies.push(Number.POSITIVE_INFINITY);
                result.dueAt.push(0);
              }
              result.failures.push(gaveUp ? `${url}: ${lost} requests unanswered ${answerDeadlineMs / 1000} s after the last one was due` : `${url}: every connection closed; ${lost} requests unanswered`);
              finished = total;
              allDone();
            }
          });
        }),
    ),
  );
  let all: Connection[];
  try {
    all = await opening;
  } catch (err) {
    for (const c of made) c.socket.destroy();
    throw err;
  }
  free.push(...all);

  started = performance.now();
  let due = 0;
  while (due < total) {
    // Timers for waits over a millisecond, then a spin on setImmediate, so that requests leave evenly
    // spaced. Timers alone (about 1 ms granularity) send each tick's requests in one burst: measured
    // here, that raised p50 from 0.1 to 1.5 ms and p99 of both routes several times over, worse than
    // the core that the spin keeps busy.
    const wait = started + (due * 1000) / rate - performance.now();
    if (wait > 1) await new Promise((r) => setTimeout(r, wait - 1));
    else if (wait > 0) await new Promise((r) => setImmediate(r));
    while (due < total && started + (due * 1000) / rate <= performance.now()) {
      pending.push(started + (due * 1000) / rate);
      due++;
      const c = free.pop();
      if (c) send(c);
    }
  }
  const deadline = setTimeout(() => {
    gaveUp = true;
    for (const c of all) c.socket.destroy();
  }, answerDeadlineMs);
  await done;
  clearTimeout(deadline);
  for (const c of all) c.socket.destroy();
  // The loop above stops on its own once every request was due, even if all connections broke early.
  return result;
}
