import type { RequestHandler, Response } from 'express';
import type { AppMetrics } from '../metrics/app-metrics.ts';
import type { EventLoopDelay } from '../metrics/event-loop-delay.ts';
import { PROBLEM_CONTENT_TYPE, PROBLEM_KINDS, problemType, type Problem } from './problem.ts';

/** Seconds an overloaded server asks a client to wait: overload passes quickly, or the operator must act. */
export const SHED_RETRY_AFTER_S = 1;

export interface SheddingOptions {
  /** Bound on the event loop's delay (ms); 0 = not watched. */
  eventLoopDelayMs: number;
  /** Bound on admitted API requests not answered yet; 0 = no bound. */
  maxInFlight: number;
  delay: EventLoopDelay;
  metrics?: AppMetrics;
}

export interface Shedding {
  /** Runs ahead of body parsing; answers 503 at once when a bound is passed. */
  middleware: RequestHandler;
  /** Admitted API requests not answered yet. */
  inFlight(): number;
}

const API_PATH = /^\/api\/v1(?:[/?]|$)/i;

/**
 * Overload shedding for `/api/v1`: when the event loop runs late or too many requests are under way,
 * a new request is answered 503 with `Retry-After` before its body is read, its caller is looked up or
 * any unit is spent; requests already admitted go on undisturbed. Health checks, /metrics and the
 * console's files are never shed (they are not under /api/v1).
 *
 * The delay is the current turn's running time (see event-loop-delay.ts): requests read late in a long
 * turn are shed at once, instead of a sampling window later, which keeps admitted requests' latency
 * near the bound even while twice the load the server can serve arrives.
 */
export function createShedding(options: SheddingOptions): Shedding {
  const { eventLoopDelayMs, maxInFlight, delay, metrics } = options;
  let inFlight = 0;
  // `this` is the response: one listener function for every request.
  function answered(this: Response): void {
    inFlight--;
  }
  const middleware: RequestHandler = (req, res, next) => {
    if (!API_PATH.test(req.url)) {
      next();
      return;
    }
    if (eventLoopDelayMs > 0 && delay.currentMs() > eventLoopDelayMs) {
      metrics?.shedByDelay.inc();
      shed(req.originalUrl, res, 'The server is overloaded (its event loop runs late)');
      return;
    }
    if (maxInFlight > 0 && inFlight >= maxInFlight) {
      metrics?.shedByInFlight.inc();
      shed(req.originalUrl, res, `The server is overloaded (its bound of ${maxInFlight} requests under way is reached)`);
      return;
    }
    inFlight++;
    // 'close' comes once for every response, answered or abandoned.
    res.on('close', answered);
    next();
  };
  return { middleware, inFlight: () => inFlight };
}

const UNAVAILABLE_TYPE = problemType('unavailable');

/** The `unavailable` problem, written straight away: no Error (and no stack) built for each shed request. */
function shed(url: string, res: Response, why: string): void {
  const problem: Problem = {
    type: UNAVAILABLE_TYPE,
    title: PROBLEM_KINDS.unavailable.title,
    status: 503,
    detail: `${why}; retry after ${SHED_RETRY_AFTER_S} s (Retry-After), spreading retries out.`,
    instance: url,
  };
  res.statusCode = 503;
  res.setHeader('Retry-After', String(SHED_RETRY_AFTER_S));
  res.setHeader('Content-Type', `${PROBLEM_CONTENT_TYPE}; charset=utf-8`);
  res.end(JSON.stringify(problem));
}
