import { monitorEventLoopDelay } from 'node:perf_hooks';

/** How late the event loop runs: the overload signal and its figure. */
export interface EventLoopDelay {
  /**
   * How long the current turn of the event loop has been running (ms) when a request is read. Requests
   * that arrive together are read in one turn, one after another, so this is how long the ones read
   * now have waited behind the others: the delay a new request would add to. Read on every API request.
   */
  currentMs(): number;
  /** Mean delay (ms) over the latest sampling window of Node's delay monitor: the figure for people. */
  recentMs(): number;
  stop(): void;
}

/** The monitor's timer period (ms); Node reports it inside each sample, so it is taken off again. */
const RESOLUTION_MS = 10;
/** The window a recent reading covers. */
export const DELAY_WINDOW_MS = 100;

/**
 * The current turn's running time (no timer: a turn is marked when its first request is read and ends
 * at the next check phase) and Node's `monitorEventLoopDelay` sampled every DELAY_WINDOW_MS. The
 * sampled mean is not what sheds: it lags by up to a window, and one long request (a large batch)
 * would then shed the unrelated requests after it although nothing waits any more.
 */
export function startEventLoopDelay(): EventLoopDelay {
  const histogram = monitorEventLoopDelay({ resolution: RESOLUTION_MS });
  histogram.enable();
  let recent = 0;
  const timer = setInterval(() => {
    const meanMs = histogram.count > 0 ? histogram.mean / 1e6 : RESOLUTION_MS;
    recent = Math.max(0, meanMs - RESOLUTION_MS);
    histogram.reset();
  }, DELAY_WINDOW_MS).unref();
  let turnStartedMs = -1;
  const endTurn = () => {
    turnStartedMs = -1;
  };
  return {
    currentMs: () => {
      const nowMs = performance.now();
      if (turnStartedMs < 0) {
        turnStartedMs = nowMs;
        setImmediate(endTurn);
        return 0;
      }
      return nowMs - turnStartedMs;
    },
    recentMs: () => recent,
    stop: () => {
      clearInterval(timer);
      histogram.disable();
    },
  };
}
