// `npm start`: installs what is missing, starts PostgreSQL on loopback (unless DATABASE_URL is set),
// builds the console and serves API + console + docs from one process. Ctrl-C stops everything it started.
import { existsSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { ensureDebianPackages, ensureNodeModules } from './lib/bootstrap.mjs';
import { runChild, runOrThrow, say } from './lib/run.mjs';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
process.chdir(root);

let cluster;
try {
  ensureNodeModules(root);
  const env = { ...process.env };
  if (!env.DATABASE_URL) {
    ensureDebianPackages(['postgresql']);
    const { startCluster, ensureDatabase } = await import('./lib/postgres.mjs');
    cluster = await startCluster({ dataDir: path.join(root, '.data', 'pg') });
    ensureDatabase(cluster.port, 'gammaline');
    env.DATABASE_URL = `postgres://postgres@127.0.0.1:${cluster.port}/gammaline`;
    // Operator tools (npm run keys) find the running database here when DATABASE_URL is unset.
    writeFileSync(path.join(root, '.data', 'database-url'), `${env.DATABASE_URL}\n`);
  } else {
    say('using the PostgreSQL at DATABASE_URL');
  }
  if (existsSync(path.join(root, 'web', 'vite.config.ts'))) {
    say('building the console…');
    runOrThrow(process.execPath, [path.join(root, 'node_modules', 'vite', 'bin', 'vite.js'), 'build', '--config', 'web/vite.config.ts', '--logLevel', 'warn'], { env });
  }
  const server = runChild(process.execPath, ['--import', 'tsx', 'server/index.ts'], { env });
  // The terminal's Ctrl-C reaches the server too; here we only wait for it and then tidy up.
  for (const signal of ['SIGINT', 'SIGTERM', 'SIGHUP']) {
    process.on(signal, () => server.child.kill('SIGTERM'));
  }
  const code = await server.exited;
  if (cluster) rmSync(path.join(root, '.data', 'database-url'), { force: true });
  cluster?.stop();
  process.exit(code);
} catch (err) {
  console.error(`[gammaline] ${err instanceof Error ? err.message : String(err)}`);
  cluster?.stop();
  process.exit(1);
}
