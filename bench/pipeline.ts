// `BENCH_SCRIPT=bench/pipeline.ts npm run bench`: the server's own CPU cost per request without the
// kernel or a load generator. Raw HTTP requests go to the real app through in-memory sockets, one
// request after another per socket; routes alternate in short rounds and each is reported as µs per
// request and as a ratio to the first route of the same round (this VM's speed drifts, ratios much
// less). For A/B work on the hot path: run it before and after a change and compare the ratios.
// PIPELINE_ROUTES='path:auth,…' (auth 1 sends the bench key), PIPELINE_ROUNDS, PIPELINE_REQUESTS,
// PIPELINE_PROFILE=file.cpuprofile writes a CPU profile of the measured rounds.
import { writeFileSync } from 'node:fs';
import { Session } from 'node:inspector/promises';
import { Duplex } from 'node:stream';
import { pino } from 'pino';
import { createApp } from '../server/app.ts';
import { createAppServer } from '../server/http/app-server.ts';
import { loadConfig } from '../server/config.ts';
import { openDatabase } from '../server/db/client.ts';
import { median, mountSameServerBareRoute, mountStrictBareRoute, prepareBenchKey } from './common.ts';

const ROUNDS = Number(process.env.PIPELINE_ROUNDS ?? 20);
const REQUESTS = Number(process.env.PIPELINE_REQUESTS ?? 4000);
const SOCKETS = 4;

const config = loadConfig({ ...process.env, LOG_LEVEL: 'silent', PORT: '0' });
const key = await prepareBenchKey(config.databaseUrl);
const database = openDatabase(config.databaseUrl, { max: 4 });
// The same reference routes as bench/server.ts.
const app = createApp({ database, config, logger: pino({ level: 'silent' }), first: mountStrictBareRoute, beforeApi: mountSameServerBareRoute });
const server = createAppServer(app);

const body = JSON.stringify({ forwardPowerW: 100, reflectedPowerW: 4 });
const routes = (process.env.PIPELINE_ROUTES ?? '/api/bench/bare:0,/bench/bare-first:0,/api/v1/mismatch:1').split(',').map((spec) => {
  const [path, auth] = spec.split(':');
  const head = `POST ${path} HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n${auth === '1' ? `Authorization: Bearer ${key}\r\n` : ''}`;
  return { path: path!, raw: Buffer.from(`${head}Content-Length: ${Buffer.byteLength(body)}\r\n\r\n${body}`) };
});

/**
 * An in-memory connection: counts an answer when a write ends a JSON body (these routes never chunk),
 * and stops the tool at the first answer that is not a 200 (a problem would be timed as a success).
 */
function connection(onAnswer: (socket: Duplex, bytes: number) => void): Duplex {
  const endsJson = (c: Buffer | string) => (typeof c === 'string' ? c.endsWith('}') : c[c.length - 1] === 0x7d);
  const checkStatus = (c: Buffer | string) => {
    const start = c.slice(0, 12).toString();
    if (start.startsWith('HTTP/1.1 ') && start !== 'HTTP/1.1 200') {
      console.error(`[pipeline] an answer was not 200: ${c.toString().slice(0, 400)}`);
      process.exit(1);
    }
  };
  const socket: Duplex = new Duplex({
    read() {},
    write(chunk: Buffer, _encoding, done) {
      checkStatus(chunk);
      if (endsJson(chunk)) onAnswer(socket, chunk.length);
      done();
    },
    writev(chunks, done) {
      let bytes = 0;
      let last: Buffer | string | undefined;
      for (const { chunk } of chunks as { chunk: Buffer | string }[]) {
        checkStatus(chunk);
        bytes += chunk.length;
        if (chunk.length > 0) last = chunk;
      }
      if (last !== undefined && endsJson(last)) onAnswer(socket, bytes);
      done();
    },
  });
  Object.assign(socket, { remoteAddress: '127.0.0.1', remotePort: 40000, setTimeout: () => socket, setNoDelay: () => socket, setKeepAlive: () => socket });
  return socket;
}

/** µs per request and bytes per answer for `n` requests of one route over SOCKETS connections. */
function run(raw: Buffer, n: number): Promise<{ us: number; bytes: number }> {
  return new Promise((resolve) => {
    let sent = 0;
    let answered = 0;
    let bytes = 0;
    const sockets: Duplex[] = [];
    const started = performance.now();
    const onAnswer = (socket: Duplex, size: number) => {
      answered++;
      bytes += size;
      if (answered === n) {
        resolve({ us: ((performance.now() - started) * 1000) / n, bytes: bytes / n });
        for (const s of sockets) s.destroy();
      }
      else if (sent < n) {
        sent++;
        setImmediate(() => socket.push(raw));
      }
    };
    for (let i = 0; i < SOCKETS; i++) {
      const socket = connection(onAnswer);
      sockets.push(socket);
      server.emit('connection', socket);
      sent++;
      socket.push(raw);
    }
  });
}

for (const route of routes) await run(route.raw, 10_000); // compiled code paths, a leased key
const profiler = new Session();
if (process.env.PIPELINE_PROFILE) {
  profiler.connect();
  await profiler.post('Profiler.enable');
  await profiler.post('Profiler.start');
}
const times = routes.map(() => [] as number[]);
const sizes = routes.map(() => 0);
for (let round = 0; round < ROUNDS; round++) {
  for (const [i, route] of routes.entries()) {
    const { us, bytes } = await run(route.raw, REQUESTS);
    times[i]!.push(us);
    sizes[i] = bytes;
  }
}
if (process.env.PIPELINE_PROFILE) {
  const { profile } = await profiler.post('Profiler.stop');
  writeFileSync(process.env.PIPELINE_PROFILE, JSON.stringify(profile));
}
for (const [i, route] of routes.entries()) {
  const ratios = times[i]!.map((t, round) => t / times[0]![round]!);
  console.log(
    `${route.path.padEnd(22)} ${median(times[i]!).toFixed(1).padStart(6)} µs/request (min ${Math.min(...times[i]!).toFixed(1)}), ` +
      `${Math.round(sizes[i]!)} bytes/answer, ${median(ratios).toFixed(3)} × ${routes[0]!.path}`,
  );
}
await app.close();
await database.close();
process.exit(0);
