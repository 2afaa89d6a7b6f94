import { spawn, spawnSync } from 'node:child_process';

/** Runs a command to completion with inherited output; throws with the command line on failure. */
export function runOrThrow(command, args, options = {}) {
  const result = spawnSync(command, args, { stdio: 'inherit', ...options });
  if (result.error) throw new Error(`${command} could not start: ${result.error.message}`);
  if (result.status !== 0) throw new Error(`${command} ${args.join(' ')} exited with ${result.status ?? result.signal}`);
  return result;
}

/** Runs a command and returns its trimmed stdout, or undefined when it fails. */
export function capture(command, args, options = {}) {
  const result = spawnSync(command, args, { encoding: 'utf8', ...options });
  if (result.error || result.status !== 0) return undefined;
  return result.stdout.trim();
}

/** Starts a long-running child and resolves with its exit code. */
export function runChild(command, args, options = {}) {
  const child = spawn(command, args, { stdio: 'inherit', ...options });
  const exited = new Promise((resolve) => {
    child.on('exit', (code, signal) => resolve(code ?? (signal ? 128 + 2 : 1)));
    child.on('error', () => resolve(1));
  });
  return { child, exited };
}

export const isRoot = typeof process.getuid === 'function' && process.getuid() === 0;

export function say(message) {
  console.log(`[gammaline] ${message}`);
}
