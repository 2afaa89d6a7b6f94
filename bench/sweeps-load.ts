// P6: small calculations of one key while ten clients of another key upload and read 100,000-point
// sweeps. The figure is the p99 latency of the small calls under that load over their p99 with no
// sweep traffic, phases alternating in one run (the VM's speed drifts; only close phases compare).
import http from 'node:http';
import { createKey } from '../server/api/v1/keys/keys.service.ts';
import { CLI_ACTOR } from '../server/api/v1/audit/audit.repository.ts';
import { openDatabase } from '../server/db/client.ts';
import { seedDemo } from '../server/demo/seed.ts';
import { median } from './common.ts';
import { pacedLoad } from './paced.ts';

const SECONDS = Number(process.env.BENCH_SECONDS ?? 5);
/** Baseline/loaded pairs; the ratio is the median of the pairs'. */
const PAIRS = Number(process.env.BENCH_P6_PAIRS ?? 3);
const SWEEP_CLIENTS = 10;
const SWEEP_POINTS = 100_000;
/** Small calls per second and the connections they share: enough answers for a p99 of each phase. */
const RATE = 200;
const CONNECTIONS = 8;
const LEAD_IN_S = 1;

export interface P6Target {
  id: string;
  what: string;
  measured: Record<string, number | string | null>;
  goal: string;
  ratio: number | null;
  met: boolean | null;
}

/** A second key of the bench organisation, for the sweep traffic. */
async function sweepKey(databaseUrl: string): Promise<string> {
  const database = openDatabase(databaseUrl, { max: 2 });
  try {
    const seeded = await seedDemo(database.db, { email: 'bench@kestrel-ridge.example', password: 'bench-password-1' });
    const created = await createKey(
      database.db,
      { organisationId: seeded.organisationId, ownerId: seeded.adminId, name: 'bench sweeps', note: '', dailyQuota: 2_000_000_000, burstPerMinute: 2_000_000_000, actor: CLI_ACTOR },
      new Date(),
    );
    return created.secret;
  } finally {
    await database.close();
  }
}

/** A multipart upload of an invented 100,000-point impedance sweep (Touchstone, `# Hz Z RI R 50`), built once. */
function sweepUpload(): { body: Buffer; contentType: string } {
  const lines = ['! bench sweep: invented', '# Hz Z RI R 50'];
  for (let i = 0; i < SWEEP_POINTS; i++) lines.push(`${1e6 + i * 100} ${(50 + 20 * Math.sin(i / 500)).toFixed(6)} ${(30 * Math.cos(i / 700)).toFixed(6)}`);
  const boundary = 'gammaline-bench-boundary';
  const body = Buffer.concat([
    Buffer.from(`--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="bench.s1p"\r\nContent-Type: application/octet-stream\r\n\r\n`),
    Buffer.from(`${lines.join('\n')}\n`),
    Buffer.from(`\r\n--${boundary}--\r\n`),
  ]);
  return { body, contentType: `multipart/form-data; boundary=${boundary}` };
}

const agent = new http.Agent({ keepAlive: true, maxSockets: SWEEP_CLIENTS * 2 });

/** One request; the answer is read to its end and dropped unless `keep` (small JSON answers). */
function send(url: string, options: { method: string; headers: Record<string, string>; body?: Buffer; keep?: boolean }): Promise<{ status: number; text: string }> {
  return new Promise((resolve, reject) => {
    const req = http.request(url, { method: options.method, headers: options.headers, agent }, (res) => {
      const kept: Buffer[] = [];
      res.on('data', (c: Buffer) => {
        if (options.keep) kept.push(c);
      });
      res.on('end', () => resolve({ status: res.statusCode ?? 0, text: Buffer.concat(kept).toString() }));
      res.on('error', reject);
    });
    req.on('error', reject);
    req.end(options.body);
  });
}

/**
 * Ten clients, each in a loop until stopped: upload a sweep, read its first page and two more, read
 * it whole as CSV, delete it. Returns how many sweeps went round and any failures.
 */
function sweepTraffic(base: string, key: string, upload: { body: Buffer; contentType: string }) {
  let stopped = false;
  let rounds = 0;
  const failures: string[] = [];
  const auth = { authorization: `Bearer ${key}` };
  const client = async () => {
    while (!stopped) {
      const made = await send(`${base}/api/v1/sweeps`, { method: 'POST', headers: { ...auth, 'content-type': upload.contentType, 'content-length': String(upload.body.length) }, body: upload.body, keep: true });
      if (made.status !== 201) {
        failures.push(`upload ${made.status}`);
        continue;
      }
      const { id, nextCursor } = JSON.parse(made.text) as { id: string; nextCursor: string | null };
      let cursor = nextCursor;
      for (let page = 0; page < 2 && cursor && !stopped; page++) {
        const next = await send(`${base}/api/v1/sweeps/${id}/points?cursor=${cursor}`, { method: 'GET', headers: auth, keep: true });
        if (next.status !== 200) failures.push(`page ${next.status}`);
        cursor = next.status === 200 ? (JSON.parse(next.text) as { nextCursor: string | null }).nextCursor : null;
      }
      if (!stopped) {
        const csv = await send(`${base}/api/v1/sweeps/${id}/points.csv`, { method: 'GET', headers: auth });
        if (csv.status !== 200) failures.push(`export ${csv.status}`);
      }
      await send(`${base}/api/v1/sweeps/${id}`, { method: 'DELETE', headers: auth });
      rounds++;
    }
  };
  const running = Promise.all(Array.from({ length: SWEEP_CLIENTS }, () => client().catch((err: unknown) => void failures.push(String(err)))));
  return {
    stop: async () => {
      stopped = true;
      await running;
      return { rounds, failures };
    },
  };
}

async function serverLoop(base: string): Promise<{ p99Ms: number; maxMs: number }> {
  return (await (await fetch(`${base}/bench/loop`)).json()) as { p99Ms: number; maxMs: number };
}

async function smallCallsP99(base: string, key: string): Promise<{ p99: number; failures: number; loopMaxMs: number }> {
  await fetch(`${base}/bench/loop/reset`, { method: 'POST' });
  const body = JSON.stringify({ forwardPowerW: 100, reflectedPowerW: 4 });
  const { latencies, failures } = await pacedLoad(`${base}/api/v1/mismatch`, body, { authorization: `Bearer ${key}` }, { rate: RATE, seconds: SECONDS, connections: CONNECTIONS, leadInSeconds: LEAD_IN_S });
  const sorted = [...latencies].sort((a, b) => a - b);
  const loop = await serverLoop(base);
  return { p99: sorted[Math.min(sorted.length - 1, Math.floor(sorted.length * 0.99))]!, failures: failures.length, loopMaxMs: loop.maxMs };
}

export async function p6(base: string, key: string, databaseUrl: string): Promise<P6Target> {
  const heavyKey = await sweepKey(databaseUrl);
  const upload = sweepUpload();
  // Warm-up: the sweep worker started, the code paths compiled, the key leases taken.
  await smallCallsP99(base, key);
  const warm = sweepTraffic(base, heavyKey, upload);
  await new Promise((r) => setTimeout(r, 3000));
  await warm.stop();

  const quiet: number[] = [];
  const loaded: number[] = [];
  const ratios: number[] = [];
  const loopMax: number[] = [];
  let rounds = 0;
  let failures = 0;
  const sweepFailures: string[] = [];
  for (let i = 0; i < PAIRS; i++) {
    // Alternate order, so a drift within a pair does not always favour the same phase.
    const phases = i % 2 === 0 ? (['quiet', 'loaded'] as const) : (['loaded', 'quiet'] as const);
    const pair: Record<string, number> = {};
    for (const phase of phases) {
      if (phase === 'quiet') {
        const r = await smallCallsP99(base, key);
        pair.quiet = r.p99;
        failures += r.failures;
        continue;
      }
      const traffic = sweepTraffic(base, heavyKey, upload);
      // Uploads in flight before measuring, so the measured seconds see the whole mix.
      await new Promise((r) => setTimeout(r, 1000));
      const r = await smallCallsP99(base, key);
      const done = await traffic.stop();
      pair.loaded = r.p99;
      failures += r.failures;
      loopMax.push(r.loopMaxMs);
      rounds += done.rounds;
      sweepFailures.push(...done.failures);
    }
    if (process.env.BENCH_DEBUG) console.error(`[bench] P6 pair ${i}: p99 quiet ${pair.quiet!.toFixed(1)} ms, loaded ${pair.loaded!.toFixed(1)} ms`);
    quiet.push(pair.quiet!);
    loaded.push(pair.loaded!);
    ratios.push(pair.loaded! / pair.quiet!);
  }
  agent.destroy();
  if (sweepFailures.length > 0) console.error(`[bench] P6: ${sweepFailures.length} sweep requests failed: ${sweepFailures.slice(0, 5).join(' | ')}`);
  const ratio = median(ratios);
  return {
    id: 'P6',
    what: `p99 of POST /api/v1/mismatch (${RATE}/s, one key) while ${SWEEP_CLIENTS} clients of another key upload and read ${SWEEP_POINTS.toLocaleString('en')}-point sweeps, vs no sweep traffic`,
    measured: {
      quietP99Ms: median(quiet),
      loadedP99Ms: median(loaded),
      pairs: PAIRS,
      sweepsUploadedAndRead: rounds,
      sweepRequestFailures: sweepFailures.length,
      smallCallFailures: failures,
      serverLoopDelayMaxMsLoaded: median(loopMax),
    },
    goal: 'ratio ≤ 3',
    ratio,
    met: failures === 0 ? ratio <= 3 : false,
  };
}
