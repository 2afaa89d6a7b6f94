import { collectDefaultMetrics, Counter, Gauge, Histogram, Registry } from 'prom-client';
import type pg from 'pg';

/**
 * Labels are bounded on purpose: route templates (never the path asked), methods, status codes,
 * calculation endpoints and fixed reasons. Key ids, e-mails, organisations and addresses never
 * become a label value: they are unbounded and personal.
 */

/** Latency buckets in seconds: a 2 ms calculation and a 10 s upload both land in a useful bucket. */
const LATENCY_BUCKETS = [0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10];

const METHODS = ['GET', 'POST', 'PUT', 'PATCH', 'DELETE', 'HEAD', 'OPTIONS'] as const;
/** Any other method shares one label value, so odd methods cannot grow the series. */
const OTHER_METHOD = METHODS.length;
/** The route label of requests no route matched (404s, 405s, shed requests, static files). */
export const UNMATCHED_ROUTE = 'unmatched';

type Child = { inc(value?: number): void };
type Observer = { observe(value: number): void };

/** Spending and refusals of calculation units, and the lease traffic behind them (server/quota). */
export interface QuotaTally {
  spent(endpoint: string, units: number): void;
  refused(endpoint: string, reason: 'quota' | 'burst', units: number): void;
  /** One reservation taken from the database, and the units it granted. */
  leased(units: number): void;
  /** One return of unspent units to the database. */
  gaveBack(units: number): void;
  /** A reclaim request sent to the other processes, or heard from one. */
  reclaim(direction: 'sent' | 'received'): void;
}

/** Lookups of the verified-key cache (server/auth/key-cache.ts). */
export interface CacheTally {
  hit(): void;
  miss(): void;
}

const noop = () => {};
/** For components built without an app (unit tests, tools): counts nothing. */
export const NO_QUOTA_TALLY: QuotaTally = { spent: noop, refused: noop, leased: noop, gaveBack: noop, reclaim: noop };
export const NO_CACHE_TALLY: CacheTally = { hit: noop, miss: noop };

/**
 * Node's process metrics (CPU, memory, heap, GC, event-loop lag), in a registry of their own for the
 * whole process: prom-client's collectors start an event-loop monitor and a GC observer that cannot
 * be stopped, so registering them once per app would leak one of each for every app a test builds.
 */
let processRegistry: Registry | undefined;
function processMetrics(): Registry {
  if (!processRegistry) {
    processRegistry = new Registry();
    collectDefaultMetrics({ register: processRegistry });
  }
  return processRegistry;
}

interface EndpointChildren {
  spent: Child;
  refusedQuota: Child;
  refusedBurst: Child;
}

/**
 * One app's metrics in one registry of its own (never prom-client's global one: tests build many
 * apps in one process). Hot-path counters are bound to their label values once and reused, so a
 * request allocates no label object.
 */
export class AppMetrics {
  readonly registry = new Registry();
  readonly requestDuration: Histogram<'route' | 'method' | 'status'>;
  readonly requestsShed: Counter<'reason'>;
  readonly ndjsonLinesStreamed: Counter;
  readonly sweepsStored: Counter;
  readonly quota: QuotaTally;
  readonly keyCache: CacheTally;
  readonly unitsSpent: Counter<'endpoint'>;
  readonly unitsRefused: Counter<'endpoint' | 'reason'>;
  private readonly endpoints = new Map<string, EndpointChildren>();
  /** Request series by route (the Route object Express matched; undefined = unmatched), then status × method. */
  private readonly byRoute = new WeakMap<object, Map<number, Observer>>();
  private readonly unmatched = new Map<number, Observer>();
  readonly shedByDelay: Child;
  readonly shedByInFlight: Child;

  /** API requests admitted and not answered yet (0 when unknown). */
  readonly inFlight: () => number;
  /** The event loop's recent delay in ms (0 when unknown). */
  readonly eventLoopDelayMs: () => number;
  /** The serving pool, for the Status page's figures. */
  readonly pool: pg.Pool | undefined;

  constructor(options: { pool?: pg.Pool; inFlight?: () => number; eventLoopDelayMs?: () => number } = {}) {
    this.inFlight = options.inFlight ?? (() => 0);
    this.eventLoopDelayMs = options.eventLoopDelayMs ?? (() => 0);
    this.pool = options.pool;
    const registers = [this.registry];
    this.requestDuration = new Histogram({
      name: 'gammaline_http_request_duration_seconds',
      help: 'Time from a request arriving to its answer being written, by route template, method and status; _count is the number of requests.',
      labelNames: ['route', 'method', 'status'],
      buckets: LATENCY_BUCKETS,
      registers,
    });
    this.requestsShed = new Counter({ name: 'gammaline_http_requests_shed_total', help: 'API requests answered 503 at once because the server was overloaded, by the bound that was passed.', labelNames: ['reason'], registers });
    this.shedByDelay = this.requestsShed.labels('event_loop_delay');
    this.shedByInFlight = this.requestsShed.labels('in_flight');
    this.unitsSpent = new Counter({ name: 'gammaline_calculation_units_spent_total', help: 'Calculation units spent by admitted requests, by endpoint (keys and console sessions).', labelNames: ['endpoint'], registers });
    this.unitsRefused = new Counter({ name: 'gammaline_calculation_units_refused_total', help: 'Calculation units of requests refused with 429, by endpoint and reason (quota: the daily quota; burst: the per-minute limit).', labelNames: ['endpoint', 'reason'], registers });
    const leases = new Counter({ name: 'gammaline_quota_lease_reservations_total', help: 'Blocks of quota units reserved from the database (one statement each).', registers });
    const leasedUnits = new Counter({ name: 'gammaline_quota_lease_reserved_units_total', help: 'Quota units reserved from the database ahead of or for requests.', registers });
    const giveBacks = new Counter({ name: 'gammaline_quota_lease_give_backs_total', help: 'Returns of unspent quota units to the database (idle keys, changed keys, reclaims, shutdown).', registers });
    const givenBackUnits = new Counter({ name: 'gammaline_quota_lease_given_back_units_total', help: 'Unspent quota units given back to the database.', registers });
    const reclaims = new Counter({ name: 'gammaline_quota_reclaim_requests_total', help: 'Requests to other processes for their unspent units of a key: sent by this process, or received from another.', labelNames: ['direction'], registers });
    const reclaimSent = reclaims.labels('sent');
    const reclaimReceived = reclaims.labels('received');
    const lookups = new Counter({ name: 'gammaline_key_cache_lookups_total', help: 'Key checks by the verified-key cache: hit (answered from memory) or miss (the request waited for a database verification).', labelNames: ['result'], registers });
    const hits = lookups.labels('hit');
    const misses = lookups.labels('miss');
    this.keyCache = { hit: () => hits.inc(), miss: () => misses.inc() };
    this.ndjsonLinesStreamed = new Counter({ name: 'gammaline_ndjson_lines_streamed_total', help: 'Result lines written to NDJSON batch streams.', registers });
    this.sweepsStored = new Counter({ name: 'gammaline_sweeps_stored_total', help: 'Sweeps stored by uploads.', registers });
    this.quota = {
      spent: (endpoint, units) => this.endpoint(endpoint).spent.inc(units),
      refused: (endpoint, reason, units) => (reason === 'quota' ? this.endpoint(endpoint).refusedQuota : this.endpoint(endpoint).refusedBurst).inc(units),
      leased: (units) => {
        leases.inc();
        if (units > 0) leasedUnits.inc(units);
      },
      gaveBack: (units) => {
        giveBacks.inc();
        if (units > 0) givenBackUnits.inc(units);
      },
      reclaim: (direction) => (direction === 'sent' ? reclaimSent : reclaimReceived).inc(),
    };
    const inFlight = this.inFlight;
    const delay = this.eventLoopDelayMs;
    new Gauge({ name: 'gammaline_http_requests_in_flight', help: 'API requests admitted and not answered yet.', registers, collect() { this.set(inFlight()); } });
    new Gauge({ name: 'gammaline_event_loop_delay_recent_seconds', help: 'Mean event-loop delay over the latest 100 ms window (the delay monitor of Node); sustained values near SHED_EVENT_LOOP_DELAY_MS mean shedding is near.', registers, collect() { this.set(delay() / 1000); } });
    const pool = options.pool;
    if (pool) {
      // Read when scraped: the pool keeps these counts itself.
      new Gauge({ name: 'gammaline_db_pool_connections', help: 'Open PostgreSQL connections of the serving pool.', registers, collect() { this.set(pool.totalCount); } });
      new Gauge({ name: 'gammaline_db_pool_idle_connections', help: 'Open connections of the pool not lent to a query.', registers, collect() { this.set(pool.idleCount); } });
      new Gauge({ name: 'gammaline_db_pool_waiting_queries', help: 'Queries waiting for a free connection of the pool.', registers, collect() { this.set(pool.waitingCount); } });
      new Gauge({ name: 'gammaline_db_pool_max_connections', help: 'Most connections the pool may open.', registers, collect() { this.set(pool.options.max ?? 10); } });
    }
  }

  /** Records one answered request; `route` is the Route object Express matched, if any. */
  observeRequest(route: { path: unknown } | undefined, originalUrl: string, method: string, status: number, seconds: number): void {
    let series: Map<number, Observer> | undefined;
    if (route === undefined) series = this.unmatched;
    else {
      series = this.byRoute.get(route);
      if (!series) {
        series = new Map();
        this.byRoute.set(route, series);
      }
    }
    const methodIndex = methodIndexOf(method);
    const slot = status * 8 + methodIndex;
    let child = series.get(slot);
    if (!child) {
      const template = route === undefined ? UNMATCHED_ROUTE : routeTemplate(route, originalUrl);
      child = this.requestDuration.labels(template, methodIndex === OTHER_METHOD ? 'other' : METHODS[methodIndex]!, String(status));
      series.set(slot, child);
    }
    child.observe(seconds);
  }

  /** The exposition: the process's own metrics, then this app's. */
  async exposition(): Promise<string> {
    return `${await processMetrics().metrics()}\n${await this.registry.metrics()}`;
  }

  get contentType(): string {
    return this.registry.contentType;
  }

  private endpoint(name: string): EndpointChildren {
    let children = this.endpoints.get(name);
    if (!children) {
      children = { spent: this.unitsSpent.labels(name), refusedQuota: this.unitsRefused.labels(name, 'quota'), refusedBurst: this.unitsRefused.labels(name, 'burst') };
      this.endpoints.set(name, children);
    }
    return children;
  }
}

function methodIndexOf(method: string): number {
  const i = (METHODS as readonly string[]).indexOf(method);
  return i === -1 ? OTHER_METHOD : i;
}

/** Where the app mounts the API router; every other route sits on the app itself. */
const API_MOUNT = '/api/v1';
const UNDER_API = /^\/api\/v1\//i;

/**
 * `/api/v1/sweeps/:id` for the route `/sweeps/:id` of the API router. Not from `req.baseUrl`: Express
 * restores it when an error leaves the router before the answer, and it keeps the caller's letter case.
 */
function routeTemplate(route: { path: unknown }, originalUrl: string): string {
  const path = typeof route.path === 'string' ? route.path : String(route.path);
  return UNDER_API.test(originalUrl) && !UNDER_API.test(path) ? API_MOUNT + path : path;
}

/** Builds the process registry now (index.ts), so the first scrape does not pay for it. */
export function startProcessMetrics(): void {
  processMetrics();
}
