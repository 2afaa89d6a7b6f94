// `npm run bench`: the same bootstrap as `npm test`, a throwaway PostgreSQL, then bench/run.ts.
import { chmodSync, mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { ensureDebianPackages, ensureNodeModules } from './lib/bootstrap.mjs';
import { runChild } from './lib/run.mjs';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
process.chdir(root);
let cluster;
const scratch = mkdtempSync(path.join(os.tmpdir(), 'gammaline-bench-'));
try {
  ensureNodeModules(root);
  ensureDebianPackages(['postgresql']);
  const { startCluster, ensureDatabase } = await import('./lib/postgres.mjs');
  chmodSync(scratch, 0o755);
  cluster = await startCluster({ dataDir: path.join(scratch, 'pg'), throwaway: true });
  ensureDatabase(cluster.port, 'gammaline_bench');
  const env = { ...process.env, NODE_ENV: 'production', SESSION_SECRET: 'bench-only-secret-0123456789abcdef0123', SMTP_URL: 'smtp://127.0.0.1:9', DATABASE_URL: `postgres://postgres@127.0.0.1:${cluster.port}/gammaline_bench` };
  // BENCH_SCRIPT runs another script in the same set-up (an A/B comparison while working on a target).
  const bench = runChild(process.execPath, ['--import', 'tsx', process.env.BENCH_SCRIPT ?? 'bench/run.ts'], { env });
  process.exitCode = await bench.exited;
} catch (err) {
  console.error(`[gammaline] ${err instanceof Error ? err.message : String(err)}`);
  process.exitCode = 1;
} finally {
  cluster?.stop();
  rmSync(scratch, { recursive: true, force: true });
}
