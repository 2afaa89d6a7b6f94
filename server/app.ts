import { existsSync } from 'node:fs';
import path from 'node:path';
import express, { type Express } from 'express';
import { pino, type Logger } from 'pino';
import swaggerUi from 'swagger-ui-express';
import type { AppConfig } from './config.ts';
import { systemClock, type AppContext, type Clock } from './context.ts';
import type { Database } from './db/client.ts';
import { healthRouter } from './api/health.routes.ts';
import { v1Router } from './api/v1/router.ts';
import { byteSize, refuseOversizedBodies } from './http/body-size.ts';
import { notFoundHandler, problemErrorHandler } from './http/error-middleware.ts';
import { methodNotAllowed } from './http/method-not-allowed.ts';
import { requestLog } from './http/request-log.ts';
import { securityHeaders } from './http/security-headers.ts';
import { BATCH_JSON_LIMIT } from './api/v1/batch/batch.routes.ts';
import { NDJSON_TYPE } from './api/v1/batch/batch.ndjson.ts';
import { MAX_SWEEP_UPLOAD_BYTES } from './api/v1/sweeps/sweeps.upload.ts';
import { LOCAL_MODE_PATH_PREFIX } from './api/v1/mail/mail.routes.ts';
import { openApiDocument, serveOpenApiDocument } from './openapi/document.ts';
import { sessionMiddleware } from './auth/session.ts';
import { startKeyServices, type KeyServices } from './quota/key-services.ts';
import { Meter } from './quota/meter.ts';
import { createLogOnlyMailer, type Mailer } from './mail/mailer.ts';
import { AppMetrics } from './metrics/app-metrics.ts';
import { startEventLoopDelay, type EventLoopDelay } from './metrics/event-loop-delay.ts';
import { metricsRoute } from './http/metrics-route.ts';
import { createShedding, type Shedding } from './http/shedding.ts';

export interface AppDependencies {
  database: Database;
  config: AppConfig;
  clock?: Clock;
  logger?: Logger;
  /** Outgoing mail; index.ts passes SMTP_URL's or the local capture server's. Without one, mail is logged and dropped. */
  mailer?: Mailer;
  /** Routes mounted before everything else (the benchmark's probes and reference routes, in the same app as the API). */
  first?: (app: Express) => void;
  /**
   * Routes mounted where any route of this server sits: after the server-wide middleware (request ids,
   * security headers, body limits, JSON bodies), before the API (the benchmark's same-server reference).
   */
  beforeApi?: (app: Express) => void;
  /** The event-loop delay reading that overload shedding watches; tests pass one they control. */
  eventLoopDelay?: EventLoopDelay;
}

/** Routes that parse their own body (see server/api/v1/batch). */
const OWN_BODY_PATH = /^\/api\/v1\/batch\/?$/i;
/** The one route that takes multipart uploads (see server/api/v1/sweeps). */
const UPLOAD_PATH = /^\/api\/v1\/sweeps\/?$/i;

/** The Express app with what it started alongside: its key services, and how to stop them. */
export interface GammalineApp extends Express {
  /** The verified-key cache, change listener, quota leases and last-used writes this app started. */
  readonly keyServices: KeyServices;
  /** This app's Prometheus registry and counters, served at GET /metrics. */
  readonly metrics: AppMetrics;
  /**
   * Stops what the app started, after its last response: gives unspent quota units back, writes buffered
   * usage and last-used times, closes the key-change listener, stops the event-loop monitor. Idempotent. The database handle, the
   * mailer and any server listening with the app stay the caller's to close (afterwards).
   */
  close(): Promise<void>;
}

/** Builds the whole HTTP application from its dependencies; listening is the caller's business. */
export function createApp(deps: AppDependencies): GammalineApp {
  const logger = deps.logger ?? pino({ level: deps.config.logLevel });
  const clock = deps.clock ?? systemClock;
  // Shedding counts requests under way for the metrics, and the metrics count what it sheds.
  let shedding: Shedding | undefined;
  const delay = deps.eventLoopDelay ?? startEventLoopDelay();
  const metrics = new AppMetrics({ pool: deps.database.pool, inFlight: () => shedding?.inFlight() ?? 0, eventLoopDelayMs: delay.recentMs });
  shedding = createShedding({ ...deps.config.shed, delay, metrics });
  const keyServices = startKeyServices({ database: deps.database, logger, clock, metrics });
  const stop = () => {
    if (!deps.eventLoopDelay) delay.stop();
    return keyServices.stop();
  };
  try {
    const base = { database: deps.database, config: deps.config, clock, logger, mailer: deps.mailer ?? createLogOnlyMailer(logger), keyServices, metrics };
    const ctx: AppContext = { ...base, meter: new Meter(base) };
    let closing: Promise<void> | undefined;
    return Object.assign(buildApp(ctx, deps, shedding), { keyServices, metrics, close: () => (closing ??= stop()) });
  } catch (err) {
    void stop();
    throw err;
  }
}

function buildApp(ctx: AppContext, deps: AppDependencies, shedding: Shedding): Express {
  const logger = ctx.logger;
  const app = express();
  app.disable('x-powered-by');
  // ETags only cost a hash of every body here: calculation answers are POST responses, which no cache
  // revalidates, and account data is read fresh by design. Static console files keep their own.
  app.set('etag', false);
  // Behind a reverse proxy, client addresses (sign-in throttling) and https (Secure cookies) come from its headers.
  if (deps.config.trustProxy > 0) app.set('trust proxy', deps.config.trustProxy);
  deps.first?.(app);

  app.use(requestLog(app, logger, ctx.metrics));
  // Local mode is plain HTTP on loopback (or a LAN address): forcing HTTPS there would break the console.
  const local = deps.config.mode === 'local';
  app.use(
    securityHeaders({
      strictTransportSecurity: !local,
      contentSecurityPolicy: { directives: { upgradeInsecureRequests: local ? null : [] } },
    }),
  );
  // Ahead of body limits and parsing: a shed request costs no more than its headers.
  app.use(shedding.middleware);
  app.get('/metrics', metricsRoute(ctx.metrics!, deps.config.metricsToken));
  const bodyLimit = byteSize(deps.config.bodyLimit);
  const batchLimit = byteSize(BATCH_JSON_LIMIT);
  app.use(
    refuseOversizedBodies((req) => {
      if (OWN_BODY_PATH.test(req.path)) return req.is(NDJSON_TYPE) ? undefined : batchLimit;
      if (UPLOAD_PATH.test(req.path) && req.is('multipart/form-data')) return MAX_SWEEP_UPLOAD_BYTES;
      return bodyLimit;
    }),
  );
  const jsonBody = express.json({ limit: deps.config.bodyLimit, type: ['application/json', 'application/*+json'] });
  // POST /api/v1/batch reads its own body: a larger JSON limit for that route alone, and NDJSON streamed unbuffered.
  app.use((req, res, next) => (OWN_BODY_PATH.test(req.path) ? next() : jsonBody(req, res, next)));

  deps.beforeApi?.(app);
  // The API first: calculations are the hot path, so they pass as few layers as possible.
  const api = express.Router();
  api.get('/openapi.json', serveOpenApiDocument);
  // Only the API reads the console session; static files and docs never touch the session table.
  api.use(sessionMiddleware(ctx));
  api.use(v1Router(ctx));
  app.use('/api/v1', api);
  app.use(healthRouter(ctx));
  // Paths that exist in this mode only: in production the local mail routes answer 404 to any method.
  const servedPaths = Object.fromEntries(Object.entries(openApiDocument().paths ?? {}).filter(([p]) => local || !p.startsWith(LOCAL_MODE_PATH_PREFIX)));
  app.use(['/api', '/healthz', '/readyz'], methodNotAllowed(servedPaths));
  app.use('/api', notFoundHandler);
  app.use('/docs', swaggerUi.serve, swaggerUi.setup(openApiDocument(), { customSiteTitle: 'Gammaline API reference' }));

  mountConsole(app, deps.config.webDist);
  app.use(notFoundHandler);
  app.use(problemErrorHandler);
  return app;
}

/** Serves the built console with a history fallback that never answers for `/api` or `/docs`. */
function mountConsole(app: Express, webDist: string): void {
  const root = path.resolve(webDist);
  const index = path.join(root, 'index.html');
  if (!existsSync(index)) return;
  app.use(express.static(root, { index: false, maxAge: '1h', setHeaders: noCacheForIndex }));
  app.get('/{*any}', (req, res, next) => {
    if (req.path.startsWith('/api/') || req.path === '/api' || req.path.startsWith('/docs') || !req.accepts('html')) {
      next();
      return;
    }
    res.setHeader('Cache-Control', 'no-cache');
    res.sendFile(index);
  });
}

function noCacheForIndex(res: express.Response, filePath: string): void {
  if (filePath.endsWith('index.html')) res.setHeader('Cache-Control', 'no-cache');
}
