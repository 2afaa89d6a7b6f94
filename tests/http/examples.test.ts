import { spawn } from 'node:child_process';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createKey } from '../../server/api/v1/keys/keys.service.ts';
import { createTestApp, manualClock, type TestApp } from '../helpers/app.ts';
import { listen } from '../helpers/live-server.ts';

// The programs in openapi/examples are documentation that runs. Each must print exactly the figures
// the API answers to the same requests (full double precision, compared with Object.is), wait out a
// short 429 for its Retry-After (RFC 9110 §10.2.3), and report any other problem (RFC 9457) with a
// non-zero exit.

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
const PROGRAMS = [
  { name: 'curl.sh', command: 'bash', args: ['openapi/examples/curl.sh'] },
  { name: 'python/walkthrough.py', command: 'python3', args: ['openapi/examples/python/walkthrough.py'] },
  { name: 'node/walkthrough.mjs', command: process.execPath, args: ['openapi/examples/node/walkthrough.mjs'] },
] as const;
type Program = (typeof PROGRAMS)[number];

// The same requests the programs send.
const REFER = { frequencyHz: 28_400_000, line: { cableId: 'rg-58', lengthM: 30 }, direction: 'inputToLoad', reading: { forwardPowerW: 100, reflectedPowerW: 4 } };
const LINE = { frequencyHz: 14_200_000, line: { cableId: 'rg-213', lengthM: 30 }, loadOhm: { re: 72, im: 18 }, powerW: 100 };
const BATCH = Array.from({ length: 500 }, (_, i) => `${JSON.stringify({ op: 'mismatch', input: { swr: (100 + i) / 100 } })}\n`).join('');

let ctx: TestApp;
let live: Awaited<ReturnType<typeof listen>>;
let expected: Record<string, unknown>;
// Quota days follow this clock; a program's retry can then be let into the next UTC day without waiting for it.
const clock = manualClock('2026-03-14T12:00:00Z');
let day = Date.parse('2026-03-14T00:00:00Z');

beforeAll(async () => {
  ctx = await createTestApp({}, { clock });
  live = await listen(ctx.app);
  expected = await apiFigures();
});
afterAll(async () => {
  await live?.close();
  await ctx?.close();
});

async function post(bearer: string, route: string, body: string, contentType = 'application/json'): Promise<Response> {
  return fetch(`${live.base}/api/v1${route}`, { method: 'POST', headers: { Authorization: `Bearer ${bearer}`, 'Content-Type': contentType }, body });
}

async function postJson(route: string, body: unknown): Promise<Record<string, any>> {
  const res = await post(ctx.seed.developerKey, route, JSON.stringify(body));
  expect(res.status).toBe(200);
  return (await res.json()) as Record<string, any>;
}

/** The figures each program should print, taken from the API's own answers. */
async function apiFigures(): Promise<Record<string, unknown>> {
  const refer = await postJson('/refer', REFER);
  const line = await postJson('/line', LINE);
  const res = await post(ctx.seed.developerKey, '/batch', BATCH, 'application/x-ndjson');
  expect(res.status).toBe(200);
  const answer = (await res.text()).trimEnd().split('\n').map((l) => JSON.parse(l) as Record<string, any>);
  expect(answer.at(-1)).toMatchObject({ end: 'complete' });
  const results = answer.slice(0, -1);
  return {
    referAtInputSwr: refer.atInput.swr,
    referAtLoadSwr: refer.atLoad.swr,
    referMatchedLossDb: refer.matchedLossDb,
    referTotalLossDb: refer.totalLossDb,
    referAtLoadNetPowerW: refer.atLoad.netPowerW,
    lineInputOhmRe: line.inputOhm.re,
    lineInputOhmIm: line.inputOhm.im,
    lineAtInputSwr: line.atInput.swr,
    lineTotalLossDb: line.totalLossDb,
    lineLoadW: line.power.loadW,
    batchOk: results.filter((r) => r.ok).length,
    batchFailed: results.filter((r) => !r.ok).length,
    batchLine250ReturnLossDb: results.find((r) => r.line === 250)!.output.returnLossDb,
  };
}

/** A fresh key of the seeded developer with its own daily quota. */
async function keyWithQuota(dailyQuota: number): Promise<string> {
  const created = await createKey(
    ctx.database.db,
    { organisationId: ctx.seed.organisationId, ownerId: ctx.seed.developerId, name: `examples ${dailyQuota}`, note: '', dailyQuota, burstPerMinute: 10_000, actor: { userId: ctx.seed.adminId, label: 'test' } },
    new Date(),
  );
  return created.secret;
}

/** Spends `units` of a key's quota for the clock's day with one JSON batch. */
async function spend(bearer: string, units: number): Promise<void> {
  const items = Array.from({ length: units }, () => ({ op: 'mismatch', input: { swr: 1.5 } }));
  const res = await post(bearer, '/batch', JSON.stringify({ items }));
  expect(res.status).toBe(200);
}

interface Run {
  code: number | null;
  stdout: string;
  stderr: string;
  /** Each `name=value` line of the output, the value read as JSON. */
  figures: Record<string, unknown>;
}

function run(program: Program, bearer: string, onStderr?: (soFar: string) => void): Promise<Run> {
  return new Promise((resolve, reject) => {
    const child = spawn(program.command, program.args, {
      cwd: ROOT,
      // A proxy from the environment must not catch loopback calls (curl and urllib honour these).
      env: { ...process.env, GAMMALINE_URL: live.base, GAMMALINE_KEY: bearer, NO_PROXY: '127.0.0.1', no_proxy: '127.0.0.1' },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let stdout = '';
    let stderr = '';
    child.stdout.setEncoding('utf8').on('data', (chunk: string) => (stdout += chunk));
    child.stderr.setEncoding('utf8').on('data', (chunk: string) => {
      stderr += chunk;
      onStderr?.(stderr);
    });
    child.on('error', reject);
    child.on('close', (code) => {
      const figures: Record<string, unknown> = {};
      for (const line of stdout.split('\n')) {
        const eq = line.indexOf('=');
        if (eq > 0) figures[line.slice(0, eq)] = JSON.parse(line.slice(eq + 1));
      }
      resolve({ code, stdout, stderr, figures });
    });
  });
}

describe('the API answers the programs compare against', () => {
  it('are the ones the walkthrough describes', () => {
    // A 4 % reflected power reading at the transmitter means a worse match at the antenna: the line's
    // loss hides part of the reflection (common practice).
    expect(expected.referAtLoadSwr).toBeGreaterThan(expected.referAtInputSwr as number);
    expect(expected).toMatchObject({ batchOk: 500, batchFailed: 0 });
    // Line 250 is SWR 3.49: RL = −20·log10((s − 1)/(s + 1)) (common practice).
    expect(expected.batchLine250ReturnLossDb).toBeCloseTo(-20 * Math.log10(2.49 / 4.49), 12);
  });
});

describe.each(PROGRAMS.map((p) => [p.name, p] as const))('openapi/examples/%s', (_name, program) => {
  it('prints the API\'s own figures, digit for digit', async () => {
    const result = await run(program, ctx.seed.developerKey);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    expect(result.figures).toEqual(expected);
  });

  it('waits out a 429 for its Retry-After, then finishes with the same figures', async () => {
    // One second before midnight UTC a spent daily quota answers Retry-After: 1; the program's retry
    // is let into the next day, which brings a fresh quota (600 units: 1 + 1 + 500 needed).
    clock.set(new Date(day + 86_400_000 - 1000));
    const bearer = await keyWithQuota(600);
    await spend(bearer, 600);
    let movedOn = false;
    const result = await run(program, bearer, (stderr) => {
      if (!movedOn && /waiting 1 s/.test(stderr)) {
        movedOn = true;
        day += 86_400_000;
        clock.set(new Date(day));
      }
    });
    expect(result.stderr).toMatch(/^429\b.*waiting 1 s \(retry 1 of 3\)\n$/);
    expect(result.code).toBe(0);
    expect(result.figures).toEqual(expected);
  });

  it('reports a 429 it should not sleep through (a spent daily quota, hours to go) as a problem and exits non-zero', async () => {
    clock.set(new Date(day + 12 * 3_600_000));
    const bearer = await keyWithQuota(1);
    await spend(bearer, 1);
    const result = await run(program, bearer);
    expect(result.code).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr).not.toMatch(/waiting/);
    expect(result.stderr).toMatch(/^status=429\ntitle=Too many requests\ndetail=Key .* has spent its 1 calculation units .* in 43200 s; an admin can raise it\.\n$/);
  });

  it('reports a refused key as a problem and exits non-zero', async () => {
    const result = await run(program, 'gl_not_a_real_key');
    expect(result.code).toBe(1);
    expect(result.stdout).toBe('');
    expect(result.stderr).toMatch(/^status=401\ntitle=[^\n]+\ndetail=[^\n]+\n$/);
  });
});
