import { existsSync, statSync } from 'node:fs';
import { capture, isRoot, runOrThrow, say } from './run.mjs';

/** Installs npm dependencies when node_modules is missing or older than the lock file. */
export function ensureNodeModules(root) {
  const marker = `${root}/node_modules/.package-lock.json`;
  const lock = `${root}/package-lock.json`;
  if (existsSync(marker) && (!existsSync(lock) || statSync(marker).mtimeMs >= statSync(lock).mtimeMs)) return;
  say('installing npm dependencies (npm ci)…');
  runOrThrow('npm', existsSync(lock) ? ['ci', '--no-audit', '--no-fund'] : ['install', '--no-audit', '--no-fund'], { cwd: root });
}

/**
 * Debian packages the project needs, each recognised by a file it installs.
 * PostgreSQL's server binaries live under a versioned folder, so it is recognised by a glob check.
 */
export const DEBIAN_PACKAGES = {
  postgresql: () => findPostgresBin() !== undefined,
  ngspice: () => existsSync('/usr/bin/ngspice'),
  chromium: () => existsSync('/usr/bin/chromium'),
  // The runnable API examples (openapi/examples); any python3 or curl on PATH will do.
  python3: () => capture('python3', ['--version']) !== undefined,
  curl: () => capture('curl', ['--version']) !== undefined,
  // The fault-distance reference tests run numpy's inverse FFT through Debian's python3.
  'python3-numpy': () => capture('python3', ['-c', 'import numpy']) !== undefined,
};

export function findPostgresBin() {
  const listed = capture('bash', ['-c', 'ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1']);
  if (listed && existsSync(`${listed}/initdb`) && existsSync(`${listed}/postgres`)) return listed;
  return undefined;
}

/** Installs missing Debian packages with apt-get when root; otherwise explains what to install. */
export function ensureDebianPackages(names) {
  const missing = names.filter((name) => !DEBIAN_PACKAGES[name]());
  if (missing.length === 0) return;
  if (!isRoot) {
    throw new Error(
      `Missing system packages: ${missing.join(', ')}. Install them with:\n  sudo apt-get install -y ${missing.join(' ')}\n` +
        'or set DATABASE_URL to an existing PostgreSQL.',
    );
  }
  say(`installing Debian packages: ${missing.join(', ')} (apt-get)…`);
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  runOrThrow('apt-get', ['update', '-qq'], { env });
  runOrThrow('apt-get', ['install', '-y', '-qq', '--no-install-recommends', ...missing], { env });
}
