// `npm test`: the same bootstrap as `npm start`, then a throwaway PostgreSQL cluster for the run,
// migrations applied to a template database, Vitest, and the cluster removed afterwards even on failure.
import { chmodSync, existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { ensureDebianPackages, ensureNodeModules } from './lib/bootstrap.mjs';
import { runChild, runOrThrow, say } from './lib/run.mjs';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
process.chdir(root);
const vitestArgs = process.argv.slice(2);

let cluster;
let scratch;
function cleanUp() {
  cluster?.stop();
  cluster = undefined;
  if (scratch) rmSync(scratch, { recursive: true, force: true });
  scratch = undefined;
}

try {
  ensureNodeModules(root);
  const needed = ['postgresql', 'ngspice', 'python3', 'python3-numpy', 'curl'];
  if (existsSync(path.join(root, 'tests', 'e2e'))) needed.push('chromium');
  ensureDebianPackages(needed);

  const { startCluster, ensureDatabase } = await import('./lib/postgres.mjs');
  scratch = mkdtempSync(path.join(os.tmpdir(), 'gammaline-test-'));
  // mkdtemp makes a 0700 folder; the postgres user must be able to traverse it.
  chmodSync(scratch, 0o755);
  cluster = await startCluster({ dataDir: path.join(scratch, 'pg'), throwaway: true });
  for (const signal of ['SIGINT', 'SIGTERM']) process.on(signal, () => { cleanUp(); process.exit(130); });

  const template = 'gammaline_template';
  ensureDatabase(cluster.port, template);
  const serverUrl = `postgres://postgres@127.0.0.1:${cluster.port}`;
  const env = { ...process.env, TEST_PG_SERVER_URL: serverUrl, TEST_PG_TEMPLATE: template, DATABASE_URL: `${serverUrl}/${template}` };
  runOrThrow(process.execPath, ['--import', 'tsx', 'server/db/migrate-cli.ts'], { env });

  const report = path.join(scratch, 'vitest-report.json');
  const vitest = runChild(
    process.execPath,
    [path.join(root, 'node_modules', 'vitest', 'vitest.mjs'), 'run', '--reporter=default', '--reporter=json', `--outputFile.json=${report}`, ...vitestArgs],
    { env },
  );
  const code = await vitest.exited;
  if (existsSync(report)) {
    const summary = JSON.parse(readFileSync(report, 'utf8'));
    // A plain closing line that any CI reader understands.
    console.log(`\n${summary.numPassedTests} passed, ${summary.numFailedTests} failed, ${summary.numPendingTests + summary.numTodoTests} skipped`);
  }
  cleanUp();
  process.exit(code);
} catch (err) {
  console.error(`[gammaline] ${err instanceof Error ? err.message : String(err)}`);
  cleanUp();
  process.exit(1);
}
