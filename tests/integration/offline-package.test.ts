import { execFile } from 'node:child_process';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { promisify } from 'node:util';
import fc from 'fast-check';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CALCULATION_NAMES, CALCULATIONS } from '../../shared/calculations/table.ts';
import { BatchRequestSchema } from '../../shared/schemas/batch.ts';
import { APP_VERSION } from '../../shared/version.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';

// @gammaline/calc as a user gets it: `npm run offline:pack` builds the tarball, `npm install --offline`
// puts it in a folder of its own (zod from the npm cache, nothing fetched), and a node process there
// computes generated items of every op. The same items go to POST /api/v1/batch as one JSON batch and
// as one NDJSON stream; the package must answer each byte for byte like the server, problems included.

const exec = promisify(execFile);
const ROOT = resolve(import.meta.dirname, '../..');
const ITEMS_PER_OP = 1000;
/** A fixed seed: a failure repeats. */
const SEED = 20_2012;

type Json = null | boolean | number | string | Json[] | { [key: string]: Json };
interface Item {
  op: unknown;
  input?: Json;
}

/** Starting points per op: the documented examples, and the other forms each input takes. */
function seedsOf(op: string): Json[] {
  const calc = CALCULATIONS.find((c) => c.name === op)!;
  const example = (calc.request.meta() as { example: Json }).example;
  const fromBatchExample = (BatchRequestSchema.meta() as { example: { items: { op: string; input: Json }[] } }).example.items.filter((i) => i.op === op).map((i) => i.input);
  const moreForms: Record<string, Json[]> = {
    mismatch: [{ swr: 2.5 }, { reflectionMagnitude: 0.3 }, { returnLossDb: 14 }, { mismatchLossDb: 0.5 }, { reflectedPowerRatio: 0.1 }, { maxVoltageV: 60, minVoltageV: 40 }],
    reflection: [{ reflection: { re: 0.2, im: -0.1 }, referenceOhm: 50 }, { loadOhm: 25 }],
    line: [
      { frequencyHz: 7_100_000, line: { impedanceOhm: 50, velocityFactor: 0.66, lossDbPer100m: 2, lengthM: 20 }, loadOhm: 100 },
      { frequencyHz: 3_600_000, line: { rlgc: { rOhmPerM: 0.05, lHPerM: 2.5e-7, gSPerM: 1e-9, cFPerM: 1e-10 }, lengthM: 12 }, loadOhm: { re: 30, im: -20 } },
      { frequencyHz: 14_200_000, line: [{ cableId: 'rg-213', lengthM: 28, label: 'run' }, { insertionLossDb: 0.1, label: 'N barrel' }, { cableId: 'rg-58', lengthM: 3 }], loadOhm: 50, powerW: 400 },
    ],
    refer: [
      { matchedLossDb: 1.2, direction: 'inputToLoad', reading: { swr: 1.8 } },
      { frequencyHz: 14_200_000, line: [{ cableId: 'rg-213', lengthM: 20 }, { cableId: 'lmr-400', lengthM: 10 }], direction: 'loadToInput', reading: { swr: 3 } },
    ],
    match: [{ frequencyHz: 7_100_000, loadOhm: { re: 200, im: 80 }, sourceOhm: 50 }],
    'fault-distance': [],
  };
  return [example, ...fromBatchExample, ...(moreForms[op] ?? [])];
}

/** Field names worth adding: real ones (in the wrong place or form), near misses, and strangers. */
const FIELD_NAMES = ['swr', 'loadOhm', 'referenceOhm', 'frequencyHz', 'frequencyHZ', 'lengthM', 'lengthMeters', 'powerW', 'cableId', 'reflection', 'direction', 'reading', 'line', 'matchedLossDb', 'forwardPowerW', 'reflectedPowerW', 're', 'im', 'window', 'points', 'extra', 'loadOhms'];

const valueArb: fc.Arbitrary<Json> = fc.oneof(
  fc.double({ noNaN: true, noDefaultInfinity: true }),
  fc.double({ min: -10, max: 1e8, noNaN: true }),
  fc.integer({ min: -3, max: 200 }),
  fc.constantFrom<Json>(0, 1, -1, 1e308, -1e308, 5e-324, 50, 1e-12, 4096, 20_001),
  fc.constantFrom<Json>('inputToLoad', 'loadToInput', 'sourceToLoad', 'rg-213', 'rg-58', 'lmr-400', 'account-unknown', 'hann', 'blackman', 'flat', ''),
  fc.string({ maxLength: 6 }),
  fc.boolean(),
  fc.constantFrom<Json>(null, [], {}, { re: 50, im: 0 }, { re: -5, im: 1 }),
);

type Mutation =
  | { kind: 'set'; at: number; value: Json }
  | { kind: 'scale'; at: number; factor: number }
  | { kind: 'delete'; at: number }
  | { kind: 'add'; at: number; key: string; value: Json }
  | { kind: 'replace'; value: Json }
  | { kind: 'drop' };

const mutationArb: fc.Arbitrary<Mutation> = fc.oneof(
  { weight: 5, arbitrary: fc.record({ kind: fc.constant('set' as const), at: fc.nat(), value: valueArb }) },
  { weight: 4, arbitrary: fc.record({ kind: fc.constant('scale' as const), at: fc.nat(), factor: fc.double({ min: 0, max: 3, noNaN: true }) }) },
  { weight: 2, arbitrary: fc.record({ kind: fc.constant('delete' as const), at: fc.nat() }) },
  {
    weight: 2,
    arbitrary: fc.record({ kind: fc.constant('add' as const), at: fc.nat(), key: fc.oneof(fc.constantFrom(...FIELD_NAMES), fc.string({ minLength: 1, maxLength: 8 })), value: valueArb }),
  },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant('replace' as const), value: fc.jsonValue({ maxDepth: 2 }) as fc.Arbitrary<Json> }) },
  { weight: 1, arbitrary: fc.constant({ kind: 'drop' as const }) },
);

type Path = (string | number)[];

function pathsIn(value: Json, path: Path = [], into: { leaves: Path[]; containers: Path[]; all: Path[] } = { leaves: [], containers: [], all: [] }) {
  if (path.length > 0) into.all.push(path);
  if (value !== null && typeof value === 'object') {
    if (!Array.isArray(value)) into.containers.push(path);
    for (const [k, v] of Object.entries(value)) pathsIn(v, [...path, Array.isArray(value) ? Number(k) : k], into);
  } else into.leaves.push(path);
  return into;
}

function parentOf(root: Json, path: Path): Record<string | number, Json> {
  let cur = root as Record<string | number, Json>;
  for (const k of path.slice(0, -1)) cur = cur[k] as Record<string | number, Json>;
  return cur;
}

/** A fresh copy: generated constants are shared between samples and must never be edited in place. */
function copy(value: Json): Json {
  return JSON.parse(JSON.stringify(value)) as Json;
}

/** An item: a seed of the op with up to three mutations, now and then under another op name. */
function itemArb(op: string): fc.Arbitrary<Item> {
  const seeds = seedsOf(op);
  const otherOp = fc.constantFrom<unknown>(op.toUpperCase(), `/api/v1/${op}`, `${op}s`, 'swr', '', 42, null, CALCULATION_NAMES[(CALCULATION_NAMES.indexOf(op as never) + 1) % CALCULATION_NAMES.length]);
  return fc.record({ seed: fc.nat(), mutations: fc.array(mutationArb, { maxLength: 3 }), op: fc.option(otherOp, { freq: 12, nil: undefined }) }).map(({ seed, mutations, op: renamed }) => {
    let input: Json | undefined = copy(seeds[seed % seeds.length]!);
    for (const m of mutations) {
      if (m.kind === 'drop') input = undefined;
      else if (m.kind === 'replace') input = copy(m.value);
      if (input === undefined || input === null || typeof input !== 'object') continue;
      const paths = pathsIn(input);
      if (m.kind === 'set' || m.kind === 'scale') {
        const leaves = paths.leaves.filter((p) => p.length > 0);
        if (leaves.length === 0) continue;
        const path = leaves[m.at % leaves.length]!;
        const parent = parentOf(input, path);
        const key = path[path.length - 1]!;
        if (m.kind === 'set') parent[key] = copy(m.value);
        else if (typeof parent[key] === 'number') parent[key] = (parent[key] as number) * m.factor;
      } else if (m.kind === 'delete') {
        if (paths.all.length === 0) continue;
        const path = paths.all[m.at % paths.all.length]!;
        const parent = parentOf(input, path);
        const key = path[path.length - 1]!;
        if (Array.isArray(parent)) parent.splice(key as number, 1);
        else delete parent[key];
      } else if (m.kind === 'add' && m.key !== '__proto__' && paths.containers.length > 0) {
        const path = paths.containers[m.at % paths.containers.length]!;
        const target = (path.length === 0 ? input : parentOf(input, path)[path[path.length - 1]!]) as Record<string, Json>;
        target[m.key] = copy(m.value);
      }
    }
    return input === undefined ? { op: renamed ?? op } : { op: renamed ?? op, input };
  });
}

const CHILD_SCRIPT = `
import { readFileSync, writeFileSync } from 'node:fs';
import { calculate, calculateItem, VERSION, API_VERSION } from '@gammaline/calc';
const items = JSON.parse(readFileSync('items.json', 'utf8'));
const batch = JSON.stringify({ results: items.map((item, i) => calculateItem(item, 'items.' + i)) });
const lines = items.map((item, i) => JSON.stringify({ line: i + 1, ...calculate(item.op, item.input) }));
writeFileSync('results.json', JSON.stringify({ VERSION, API_VERSION, batch, lines }));
`;

let ctx: TestApp;
let folder: string;
let tarball: string;

beforeAll(async () => {
  const packed = await exec(process.execPath, [join(ROOT, 'scripts', 'offline-pack.mjs')], { cwd: ROOT, maxBuffer: 16 * 1024 * 1024 });
  tarball = packed.stdout.trim().split('\n').at(-1)!;
  folder = await mkdtemp(join(tmpdir(), 'gammaline-calc-'));
  // zod pinned as the app pins it (version and integrity from its lockfile): npm then takes it from
  // its cache instead of asking the registry, so --offline installs with nothing fetched.
  const lock = JSON.parse(await readFile(join(ROOT, 'package-lock.json'), 'utf8')) as { packages: Record<string, { version: string }> };
  const zod = lock.packages['node_modules/zod']!;
  const dependencies = { zod: zod.version };
  await writeFile(join(folder, 'package.json'), JSON.stringify({ name: 'offline-user', private: true, type: 'module', dependencies }));
  await writeFile(join(folder, 'package-lock.json'), JSON.stringify({ name: 'offline-user', lockfileVersion: 3, requires: true, packages: { '': { name: 'offline-user', dependencies }, 'node_modules/zod': zod } }));
  await exec('npm', ['install', '--offline', '--no-audit', '--no-fund', tarball], { cwd: folder });
  ctx = await createTestApp();
}, 180_000);

afterAll(async () => {
  await ctx?.close();
  if (folder) await rm(folder, { recursive: true, force: true });
});

describe('the packed tarball', () => {
  it('holds the compiled package alone: nothing from server/ or web/, no TypeScript sources, zod its only dependency', async () => {
    const list = (await exec('tar', ['-tzf', tarball])).stdout.trim().split('\n');
    expect(list.every((f) => f.startsWith('package/'))).toBe(true);
    expect(list.filter((f) => /(^|\/)(server|web|node_modules)\//.test(f) || (f.endsWith('.ts') && !f.endsWith('.d.ts')))).toEqual([]);
    expect(list).toEqual(expect.arrayContaining(['package/package.json', 'package/README.md', 'package/calc-package.js', 'package/calc-package.d.ts', 'package/vendor/fft.cjs']));
    const manifest = JSON.parse(await readFile(join(folder, 'node_modules', '@gammaline', 'calc', 'package.json'), 'utf8')) as Record<string, unknown>;
    const app = JSON.parse(await readFile(join(ROOT, 'package.json'), 'utf8')) as { version: string; dependencies: Record<string, string> };
    expect(manifest).toMatchObject({ name: '@gammaline/calc', version: app.version, type: 'module', dependencies: { zod: app.dependencies.zod } });
  });

  it('types its exports for a TypeScript user (declarations resolve, outputs are typed by op)', async () => {
    await writeFile(
      join(folder, 'consumer.ts'),
      [
        "import { calculate, parseTouchstone, VERSION, type Problem } from '@gammaline/calc';",
        "const answer = calculate('mismatch', { swr: 1.5 });",
        'export const swr: number | null = answer.ok ? answer.output.swr : null;',
        'export const problem: Problem | undefined = answer.ok ? undefined : answer.problem;',
        'export const read: typeof parseTouchstone = parseTouchstone;',
        'export const version: string = VERSION;',
      ].join('\n'),
    );
    // DOM for URL, which zod's declarations name (a browser page or @types/node gives it).
    const options = { strict: true, target: 'ES2022', lib: ['ES2023', 'DOM'], module: 'NodeNext', moduleResolution: 'NodeNext', types: [], noEmit: true };
    await writeFile(join(folder, 'tsconfig.json'), JSON.stringify({ compilerOptions: options, files: ['consumer.ts'] }));
    const tsc = join(ROOT, 'node_modules', 'typescript', 'bin', 'tsc');
    await expect(exec(process.execPath, [tsc, '-p', 'tsconfig.json'], { cwd: folder })).resolves.toBeDefined();
  }, 60_000);
});

describe(`${ITEMS_PER_OP} generated items of every op`, () => {
  it('answer byte for byte alike from the installed package and from POST /api/v1/batch (JSON and NDJSON)', async () => {
    const items = CALCULATION_NAMES.flatMap((op) => fc.sample(itemArb(op), { seed: SEED, numRuns: ITEMS_PER_OP }));
    const itemsJson = JSON.stringify(items);
    await writeFile(join(folder, 'items.json'), itemsJson);
    await writeFile(join(folder, 'run.mjs'), CHILD_SCRIPT);
    await exec(process.execPath, ['run.mjs'], { cwd: folder, maxBuffer: 1024 * 1024 });
    const offline = JSON.parse(await readFile(join(folder, 'results.json'), 'utf8')) as { VERSION: string; API_VERSION: string; batch: string; lines: string[] };
    expect({ VERSION: offline.VERSION, API_VERSION: offline.API_VERSION }).toEqual({ VERSION: APP_VERSION, API_VERSION: 'v1' });

    const json = await request(ctx.app).post('/api/v1/batch').set(ctx.auth).set('Content-Type', 'application/json').send(`{"items":${itemsJson}}`).expect(200);
    const online = json.body as { results: unknown[] };
    // Deep equality first, for a readable difference; then the very bytes.
    expect((JSON.parse(offline.batch) as { results: unknown[] }).results).toEqual(online.results);
    expect(offline.batch).toBe(json.text);

    const ndjson = await request(ctx.app)
      .post('/api/v1/batch')
      .set(ctx.auth)
      .set('Content-Type', 'application/x-ndjson')
      .send(items.map((i) => JSON.stringify(i)).join('\n'))
      .expect(200);
    const lines = ndjson.text.trimEnd().split('\n');
    expect(JSON.parse(lines.at(-1)!)).toMatchObject({ end: 'complete', summary: { items: items.length } });
    expect(offline.lines.map((l) => JSON.parse(l) as unknown)).toEqual(lines.slice(0, -1).map((l) => JSON.parse(l) as unknown));
    expect(offline.lines).toEqual(lines.slice(0, -1));

    // The mix is worth comparing: every op answers outputs, 400s and 422s.
    for (const [i, op] of CALCULATION_NAMES.entries()) {
      const statuses = new Set(online.results.slice(i * ITEMS_PER_OP, (i + 1) * ITEMS_PER_OP).map((r) => ((r as { ok: boolean }).ok ? 200 : (r as { problem: { status: number } }).problem.status)));
      expect([op, [...statuses].sort()]).toEqual([op, [200, 400, 422]]);
    }
  }, 180_000);
});
