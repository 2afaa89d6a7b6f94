// The server under test for `npm run bench`: the real app, plus reference routes in the same app
// so that ratios compare like with like (same Express, same JSON, same machine).
import { monitorEventLoopDelay } from 'node:perf_hooks';
import express from 'express';
import { pino } from 'pino';
import { createApp } from '../server/app.ts';
import { createAppServer } from '../server/http/app-server.ts';
import { loadConfig } from '../server/config.ts';
import { openDatabase } from '../server/db/client.ts';
import { mountSameServerBareRoute, mountStrictBareRoute } from './common.ts';

const config = loadConfig({ ...process.env, LOG_LEVEL: 'silent', PORT: '0' });
const database = openDatabase(config.databaseUrl, { max: 20 });
// The reference routes go first in the API's own app: same Express, same settings, none of the
// API's middleware, and no extra sub-app hop on either side.
const app = createApp({
  database,
  config,
  logger: pino({ level: 'silent' }),
  first: (outer) => {
    mountStrictBareRoute(outer);
    // P2's ceiling: parse the batch payload and echo it back.
    outer.post('/bench/echo', express.json({ limit: '64mb' }), (req, res) => {
      res.json(req.body);
    });
    // CPU time of the server process (µs): per-request cost without the wall-clock noise of a shared VM.
    outer.get('/bench/cpu', (_req, res) => {
      const { user, system } = process.cpuUsage();
      res.json({ cpuUs: user + system, userUs: user, systemUs: system });
    });
    // The server's event-loop delay since the last reset: how much of a latency figure the server's own
    // pauses (collections, long synchronous work) explain.
    const loop = monitorEventLoopDelay({ resolution: 1 });
    loop.enable();
    outer.post('/bench/loop/reset', (_req, res) => {
      loop.reset();
      res.json({ ok: true });
    });
    outer.get('/bench/loop', (_req, res) => {
      res.json({ p99Ms: loop.percentile(99) / 1e6, maxMs: loop.max / 1e6 });
    });
    outer.get('/bench/memory', (_req, res) => {
      res.json({ rssBytes: process.memoryUsage().rss, maxRssBytes: process.resourceUsage().maxRSS * 1024 });
    });
  },
  beforeApi: mountSameServerBareRoute,
});

const server = createAppServer(app);
server.keepAliveTimeout = 30_000;
server.listen(0, '127.0.0.1', () => {
  const address = server.address();
  if (address && typeof address === 'object') console.log(JSON.stringify({ port: address.port }));
});
process.on('SIGTERM', () => server.close(() => void app.close().then(() => database.close()).then(() => process.exit(0))));
