// P7 of `npm run bench`: overload shedding. A server of its own (bench/server.ts with the shedding
// bounds below) gets a calculation that costs it a few milliseconds (distance to fault,
// 128 points 50 kHz apart): first what it can serve (closed loop), then half of that and twice that, evenly paced
// and open-loop (requests fall due whether or not earlier ones were answered, as from many clients).
// Judged: at twice the load, the p99 of admitted requests within 3× the p99 at half load, every other
// request a 503 within 50 ms, none unanswered. Every load goes to 127.0.0.1 only and is bounded.
import { spawn, type ChildProcess } from 'node:child_process';
import net from 'node:net';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import autocannon from 'autocannon';
import { prepareBenchKey } from './common.ts';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const SECONDS = Number(process.env.BENCH_SECONDS ?? 5);
const LEAD_IN_S = 1;
/** The shedding bound P7 runs with (the server's SHED_EVENT_LOOP_DELAY_MS); BENCH_SHED_DELAY_MS changes it. */
const SHED_DELAY_MS = Number(process.env.BENCH_SHED_DELAY_MS ?? 10);
/** Connections the open-loop generator may use: enough that requests are never held back on our side for long. */
const MAX_CONNECTIONS = 256;
/** An answer missing this long after its due time counts as timed out. */
const ANSWER_DEADLINE_MS = 10_000;
const SHED_ANSWER_GOAL_MS = 50;
const CAPACITY_CONNECTIONS = 4;

export interface P7Target {
  id: 'P7';
  what: string;
  measured: Record<string, number | string | null>;
  goal: string;
  ratio: number | null;
  met: boolean | null;
}

function faultDistanceBody(): string {
  const points = Array.from({ length: 128 }, (_, k) => {
    const f = 2e6 + k * 0.05e6;
    const phase = (-4 * Math.PI * f * 19) / (299_792_458 * 0.66);
    return { frequencyHz: f, reflection: { re: Number((0.3 * Math.cos(phase)).toFixed(5)), im: Number((0.3 * Math.sin(phase)).toFixed(5)) } };
  });
  return JSON.stringify({ points, line: { velocityFactor: 0.66, lossDbPer100m: 4.5 }, window: 'hann' });
}

async function startServer(env: Record<string, string>): Promise<{ child: ChildProcess; base: string }> {
  const child = spawn(process.execPath, ['--import', 'tsx', path.join(root, 'bench', 'server.ts')], { env: { ...process.env, ...env }, stdio: ['ignore', 'pipe', 'inherit'] });
  const port = await new Promise<number>((resolve, reject) => {
    let buffered = '';
    child.stdout!.on('data', (chunk: Buffer) => {
      buffered += chunk.toString();
      const match = /\{"port":(\d+)\}/.exec(buffered);
      if (match) resolve(Number(match[1]));
    });
    child.on('exit', (code) => reject(new Error(`P7 server exited with ${code}`)));
  });
  return { child, base: `http://127.0.0.1:${port}` };
}

interface Answered {
  status: number;
  /** ms from the request's due time to the end of its answer (a late start counts). */
  ms: number;
}

interface Connection {
  socket: net.Socket;
  dueAt: number | undefined;
  received: Buffer[];
  receivedBytes: number;
  answerBytes: number | undefined;
  status: number;
}

/**
 * Open-loop paced load: `rate` requests per second fall due evenly for lead-in + `seconds`; each goes
 * out at its due time on a free keep-alive connection (a new one is opened while fewer than
 * MAX_CONNECTIONS exist). Answers of requests due after the lead-in are reported with their status.
 */
async function openLoop(url: string, body: string, headers: Record<string, string>, rate: number, seconds: number): Promise<{ answers: Answered[]; unanswered: number }> {
  const target = new URL(url);
  const extra = Object.entries({ 'content-type': 'application/json', ...headers })
    .map(([k, v]) => `${k}: ${v}\r\n`)
    .join('');
  const request = Buffer.from(`POST ${target.pathname} HTTP/1.1\r\nHost: ${target.host}\r\n${extra}Content-Length: ${Buffer.byteLength(body)}\r\n\r\n${body}`);
  const total = Math.round(rate * (LEAD_IN_S + seconds));
  const answers: Answered[] = [];
  const free: Connection[] = [];
  const all: Connection[] = [];
  const queue: number[] = [];
  let opening = 0;
  let sent = 0;
  let finished = 0;
  const started = performance.now();
  const measuredFrom = started + LEAD_IN_S * 1000;
  let allDone!: () => void;
  const done = new Promise<void>((resolve) => (allDone = resolve));

  const finish = (c: Connection, status: number) => {
    const due = c.dueAt!;
    if (due >= measuredFrom) answers.push({ status, ms: performance.now() - due });
    c.dueAt = undefined;
    c.received = [];
    c.receivedBytes = 0;
    c.answerBytes = undefined;
    finished++;
    if (finished === total) allDone();
    else if (!c.socket.destroyed) next(c);
  };
  const next = (c: Connection) => {
    const due = queue.shift();
    if (due === undefined) {
      free.push(c);
      return;
    }
    c.dueAt = due;
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
      c.answerBytes = end + 4 + Number(length?.[1] ?? 0);
    }
    if (c.receivedBytes >= c.answerBytes) finish(c, c.status);
  };
  const open = () => {
    opening++;
    const socket = net.connect({ host: target.hostname, port: Number(target.port) });
    const c: Connection = { socket, dueAt: undefined, received: [], receivedBytes: 0, answerBytes: undefined, status: 0 };
    socket.setNoDelay(true);
    socket.on('connect', () => {
      opening--;
      all.push(c);
      next(c);
    });
    socket.on('data', (chunk: Buffer) => onData(c, chunk));
    socket.on('error', () => {});
    socket.on('close', () => {
      const i = free.indexOf(c);
      if (i !== -1) free.splice(i, 1);
      if (c.dueAt !== undefined) finish(c, 0);
    });
  };
  // Some connections ready before the first request falls due, as a busy client keeps them.
  for (let i = 0; i < 32; i++) open();
  await new Promise((resolve) => setTimeout(resolve, 200));
  const t0 = performance.now();
  const pace = setInterval(() => {
    const now = performance.now();
    while (sent < total && t0 + (sent * 1000) / rate <= now) {
      queue.push(t0 + (sent * 1000) / rate);
      sent++;
    }
    while (queue.length > 0 && free.length > 0) next(free.pop()!);
    if (queue.length > 0 && all.length + opening < MAX_CONNECTIONS) open();
    if (sent === total) clearInterval(pace);
  }, 1);
  const deadline = setTimeout(() => {
    for (const c of all) c.socket.destroy();
    allDone();
  }, (LEAD_IN_S + seconds) * 1000 + ANSWER_DEADLINE_MS);
  await done;
  clearTimeout(deadline);
  clearInterval(pace);
  for (const c of all) c.socket.destroy();
  const measuredCount = Math.round(rate * seconds);
  return { answers, unanswered: Math.max(0, measuredCount - answers.length) + answers.filter((a) => a.status === 0).length };
}

const quantile = (xs: number[], q: number): number | null => {
  if (xs.length === 0) return null;
  const sorted = [...xs].sort((a, b) => a - b);
  return sorted[Math.min(sorted.length - 1, Math.floor(sorted.length * q))]!;
};
const round = (x: number | null, digits = 1) => (x === null ? null : Math.round(x * 10 ** digits) / 10 ** digits);

export async function p7(databaseUrl: string, key?: string): Promise<P7Target> {
  const bearer = { authorization: `Bearer ${key ?? (await prepareBenchKey(databaseUrl))}` };
  const { child, base } = await startServer({ SHED_EVENT_LOOP_DELAY_MS: String(SHED_DELAY_MS), SHED_MAX_IN_FLIGHT: '256' });
  try {
    const url = `${base}/api/v1/fault-distance`;
    const body = faultDistanceBody();
    const headers = { 'content-type': 'application/json', ...bearer };
    // Warm-up, then capacity: a closed loop of four connections keeps the server busy (its turns stay
    // below the shedding bound: four requests at a time), and the rate of 200 answers is what it can serve.
    await autocannon({ url, method: 'POST', body, headers, connections: CAPACITY_CONNECTIONS, duration: 2 });
    const cap = await autocannon({ url, method: 'POST', body, headers, connections: CAPACITY_CONNECTIONS, duration: SECONDS });
    const capacity = cap['2xx'] / cap.duration;
    const half = await openLoop(url, body, bearer, capacity / 2, SECONDS);
    const double = await openLoop(url, body, bearer, capacity * 2, SECONDS);
    const ok = (a: Answered) => a.status === 200;
    const halfP99 = quantile(half.answers.filter(ok).map((a) => a.ms), 0.99);
    const admitted = double.answers.filter(ok);
    const shed = double.answers.filter((a) => a.status === 503);
    const other = double.answers.filter((a) => a.status !== 200 && a.status !== 503 && a.status !== 0).length;
    const admittedP99 = quantile(admitted.map((a) => a.ms), 0.99);
    const shedP99 = quantile(shed.map((a) => a.ms), 0.99);
    const shedMax = quantile(shed.map((a) => a.ms), 1);
    const ratio = admittedP99 !== null && halfP99 ? admittedP99 / halfP99 : null;
    const met = ratio !== null && ratio <= 3 && (shedMax ?? 0) <= SHED_ANSWER_GOAL_MS && double.unanswered === 0 && other === 0 && half.answers.every(ok);
    return {
      id: 'P7',
      what: 'overload shedding: fault-distance (128 points, 50-kHz steps) at twice the rate the server can serve vs half of it',
      measured: {
        shedEventLoopDelayMs: SHED_DELAY_MS,
        capacityRps: round(capacity, 0),
        capacityNon2xx: cap.non2xx,
        halfLoadRps: round(capacity / 2, 0),
        halfLoadP99Ms: round(halfP99),
        halfLoadNon200: half.answers.filter((a) => !ok(a)).length + half.unanswered,
        doubleLoadRps: round(capacity * 2, 0),
        doubleLoadRequests: double.answers.length,
        admittedShare: round(admitted.length / Math.max(1, double.answers.length), 3),
        admittedP99Ms: round(admittedP99),
        shed503: shed.length,
        shed503P99Ms: round(shedP99),
        shed503MaxMs: round(shedMax),
        otherStatuses: other,
        unanswered: double.unanswered,
      },
      goal: `admitted p99 ≤ 3× half-load p99; every other request a 503 within ${SHED_ANSWER_GOAL_MS} ms; none unanswered`,
      ratio,
      met,
    };
  } finally {
    child.kill('SIGTERM');
  }
}

// BENCH_SCRIPT=bench/overload.ts npm run bench: P7 alone, printed.
if (process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  const url = process.env.DATABASE_URL;
  if (!url) throw new Error('DATABASE_URL is not set; run through `npm run bench`');
  console.log(JSON.stringify(await p7(url), null, 2));
  process.exit(0);
}
