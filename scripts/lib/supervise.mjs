import { spawn } from 'node:child_process';
import { say } from './run.mjs';

/** The line server/index.ts prints once it listens (one process or a cluster primary). */
const LISTENING_LINE = /Gammaline(?: \(\d+ workers\))?: console http:\/\/[^/\s]+:(\d+)\//;

/**
 * Waits after a crash: 1 s, doubling up to 30 s, back to 1 s once a run has lasted a minute — a server
 * that keeps crashing at start does not spin, and a rare crash costs a second.
 */
export const RESTART_DELAY = { firstMs: 1_000, maxMs: 30_000, healthyRunMs: 60_000 };
/** Our own SIGTERM is followed by SIGKILL after this; the server gives itself 10 s to finish its requests. */
const STOP_GRACE_MS = 20_000;

function describeExit(code, signal) {
  return signal ? `was killed by ${signal}` : `exited with code ${code}`;
}

/**
 * Keeps one server process running: starts it, restarts it after a crash (a non-zero exit or a
 * signal we did not send) with a growing delay, and ends when it stops by itself with code 0 or when
 * `stop()` is called. A first process that ends before it ever said it listens is not restarted: that
 * is a configuration error (invalid environment, port taken), and retrying cannot fix it.
 * The port is pinned after the first start, so with PORT=0 a restarted server comes back on the same one.
 * `done` resolves with the exit code to end with.
 */
export function superviseServer({ command, args, env, onStart = () => {}, delays = RESTART_DELAY }) {
  let child;
  let stopping = false;
  let restartTimer;
  let everListened = false;
  let nextDelayMs = delays.firstMs;
  let finish;
  const done = new Promise((resolve) => {
    finish = resolve;
  });
  const serverEnv = { ...env };

  function start() {
    restartTimer = undefined;
    const startedAt = Date.now();
    let listened = false;
    let pending = '';
    child = spawn(command, args, { env: serverEnv, stdio: ['inherit', 'pipe', 'inherit'] });
    onStart(child.pid);
    // The server's output goes on to the terminal unchanged; we only watch for its "listening" line.
    child.stdout.on('data', (chunk) => {
      process.stdout.write(chunk);
      if (listened) return;
      pending = (pending + chunk.toString('utf8')).slice(-4096);
      const port = LISTENING_LINE.exec(pending)?.[1];
      if (port === undefined) return;
      listened = true;
      pending = '';
      if (everListened) say(`the server is back on port ${port}`);
      everListened = true;
      serverEnv.PORT = port;
    });
    child.once('error', (err) => {
      say(`the server could not start: ${err.message}`);
      finish(1);
    });
    child.once('exit', (code, signal) => {
      child = undefined;
      if (stopping) return finish(code ?? 1);
      if (code === 0) {
        say('the server stopped by itself');
        return finish(0);
      }
      if (!everListened) {
        say(`the server ${describeExit(code, signal)} before it started listening; not restarting`);
        return finish(code ?? 1);
      }
      if (Date.now() - startedAt >= delays.healthyRunMs) nextDelayMs = delays.firstMs;
      const delayMs = nextDelayMs;
      nextDelayMs = Math.min(delays.maxMs, delayMs * 2);
      say(`server ${describeExit(code, signal)}; restarting in ${delayMs / 1000} s (the database keeps running)`);
      restartTimer = setTimeout(start, delayMs);
    });
  }

  /** Stops the server gracefully (SIGTERM, SIGKILL after a grace period) and cancels any pending restart. */
  function stop() {
    if (stopping) return done;
    stopping = true;
    if (restartTimer) {
      clearTimeout(restartTimer);
      finish(0);
    } else if (child) {
      const running = child;
      running.kill('SIGTERM');
      const kill = setTimeout(() => running.kill('SIGKILL'), STOP_GRACE_MS);
      running.once('exit', () => clearTimeout(kill));
    } else {
      finish(0);
    }
    return done;
  }

  start();
  return { done, stop };
}
