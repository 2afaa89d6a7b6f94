import http from 'node:http';
import type { AddressInfo } from 'node:net';
import express from 'express';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createAppServer } from '../../server/http/app-server.ts';

// createAppServer hands Express request and response objects that already carry the app's prototypes
// (so Express's per-request Object.setPrototypeOf changes nothing). These checks pin down that the
// objects still behave as Express and Node promise.
describe('createAppServer', () => {
  const app = express();
  app.set('etag', false);
  const seen: { sameRequestProto: boolean; sameResponseProto: boolean; isIncoming: boolean }[] = [];
  app.post('/echo', express.json(), (req, res) => {
    seen.push({
      sameRequestProto: Object.getPrototypeOf(req) === app.request,
      sameResponseProto: Object.getPrototypeOf(res) === app.response,
      isIncoming: req instanceof http.IncomingMessage && res instanceof http.ServerResponse,
    });
    res.locals.n = (res.locals.n ?? 0) + 1;
    res.status(201).set('X-Path', req.path).json({ body: req.body, app: req.app === app, locals: res.locals.n, host: req.hostname });
  });
  app.get('/ahead', (_req, res) => {
    res.send('from the app');
  });
  const server = createAppServer(app, (req, res) => {
    // A wrapper may answer before the app, with the plain Node API.
    if (req.url === '/early') {
      res.writeHead(503, { 'content-type': 'text/plain' }).end('not yet');
      return;
    }
    app(req, res);
  });
  let base = '';
  beforeAll(async () => {
    await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
    base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
  });
  afterAll(() => new Promise<void>((resolve) => server.close(() => resolve())));

  it('serves Express routes with the app prototypes from the start', async () => {
    for (let i = 0; i < 3; i++) {
      const res = await fetch(`${base}/echo`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ i }) });
      expect(res.status).toBe(201);
      expect(res.headers.get('x-path')).toBe('/echo');
      expect(await res.json()).toEqual({ body: { i }, app: true, locals: 1, host: '127.0.0.1' });
    }
    expect(seen).toHaveLength(3);
    for (const s of seen) expect(s).toEqual({ sameRequestProto: true, sameResponseProto: true, isIncoming: true });
  });

  it('lets the listener answer with the plain Node API and hand the rest to the app', async () => {
    const early = await fetch(`${base}/early`);
    expect(early.status).toBe(503);
    expect(await early.text()).toBe('not yet');
    const ahead = await fetch(`${base}/ahead`);
    expect(ahead.status).toBe(200);
    expect(await ahead.text()).toBe('from the app');
  });
});
