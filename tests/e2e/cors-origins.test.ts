import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { apiCall, baseUrl, openBrowser, serverRunning, signIn, type Browser } from './support.ts';

/**
 * A web page of another site, as a browser-based logging program would be: its script calls the API
 * with a key given in the page's fragment and writes what happened into #result. Served from plain
 * node:http servers on other loopback ports, so each is an origin of its own.
 */
const PAGE = `<!doctype html>
<html lang="en">
<head><meta charset="utf-8"><title>Station log</title></head>
<body>
<output id="result">pending</output>
<script>
const given = new URLSearchParams(location.hash.slice(1));
const result = document.getElementById('result');
fetch(given.get('api') + '/api/v1/mismatch', {
  method: 'POST',
  headers: { Authorization: 'Bearer ' + given.get('key'), 'Content-Type': 'application/json' },
  body: JSON.stringify({ forwardPowerW: 100, reflectedPowerW: 4 }),
}).then(async (response) => {
  const body = await response.json();
  result.textContent = JSON.stringify({ status: response.status, swr: body.swr, rateLimit: response.headers.get('RateLimit'), requestId: response.headers.get('Request-Id') });
}, (error) => {
  result.textContent = JSON.stringify({ failed: String(error) });
});
</script>
</body>
</html>`;

interface PageOutcome {
  status?: number;
  swr?: number;
  rateLimit?: string | null;
  requestId?: string | null;
  failed?: string;
}

function servePage(): Promise<{ server: Server; origin: string }> {
  const server = createServer((_req, res) => {
    res.writeHead(200, { 'Content-Type': 'text/html; charset=utf-8', 'Cache-Control': 'no-store' });
    res.end(PAGE);
  });
  return new Promise((resolve) => server.listen(0, '127.0.0.1', () => resolve({ server, origin: `http://127.0.0.1:${(server.address() as AddressInfo).port}` })));
}

describe.skipIf(!serverRunning)('a key used from web pages of other origins, in Chromium', () => {
  let browser: Browser;
  let allowedSite: { server: Server; origin: string };
  let otherSite: { server: Server; origin: string };
  let secret = '';

  beforeAll(async () => {
    allowedSite = await servePage();
    otherSite = await servePage();
    browser = await openBrowser();
  });

  afterAll(async () => {
    await browser?.close();
    for (const site of [allowedSite, otherSite]) await new Promise((resolve) => site?.server.close(resolve));
  });

  async function openSitePage(origin: string, key: string): Promise<PageOutcome> {
    const { page } = browser;
    await page.goto(`${origin}/#${new URLSearchParams({ api: baseUrl, key })}`);
    await page.waitForFunction(() => document.getElementById('result')?.textContent !== 'pending');
    return JSON.parse((await page.locator('#result').textContent()) ?? '{}') as PageOutcome;
  }

  it('issues a key for one site\'s pages in the console', async () => {
    const { page } = browser;
    await signIn(page);
    await page.goto(`${baseUrl}/keys`);
    await page.getByLabel('Name', { exact: true }).fill('Club log page');
    await page.getByLabel('Web pages that may use it (optional)').fill(allowedSite.origin);
    await page.getByTestId('issue-key').click();
    const secretBox = page.getByTestId('key-secret');
    await secretBox.waitFor();
    secret = (await secretBox.textContent())?.trim() ?? '';
    expect(secret).toMatch(/^gml_[A-Za-z0-9_-]{43}$/);
    await page.getByTestId('close-key-dialog').click();
    const row = page.locator('tr', { hasText: 'Club log page' });
    await expect(row.getByTestId('key-origins').textContent()).resolves.toContain(allowedSite.origin);
  });

  it('serves a page of the allowed origin, which reads the answer and its limit fields', async () => {
    const outcome = await openSitePage(allowedSite.origin, secret);
    expect(outcome.status).toBe(200);
    // Common practice: 100 W forward, 4 W reflected → |Γ| = 0.2, SWR = 1.5.
    expect(outcome.swr).toBeCloseTo(1.5, 9);
    expect(outcome.rateLimit).toBeTruthy();
    expect(outcome.requestId).toBeTruthy();
  });

  it('refuses a page of another origin: the browser\'s fetch fails', async () => {
    // No key allows that origin: the preflight is refused.
    expect((await openSitePage(otherSite.origin, secret)).failed).toMatch(/Failed to fetch/);

    // Another key allows it, so the preflight passes; the call with this key is refused all the same.
    const { page } = browser;
    await page.goto(`${baseUrl}/keys`);
    const status = await page.evaluate(async (origin) => {
      const { csrfToken } = await (await fetch('/api/v1/session')).json();
      const res = await fetch('/api/v1/keys', { method: 'POST', headers: { 'content-type': 'application/json', 'x-csrf-token': csrfToken }, body: JSON.stringify({ name: 'Other site', allowedOrigins: [origin] }) });
      return res.status;
    }, otherSite.origin);
    expect(status).toBe(201);
    expect((await openSitePage(otherSite.origin, secret)).failed).toMatch(/Failed to fetch/);

    // A program without a browser (no Origin) is not affected.
    expect((await apiCall('/api/v1/mismatch', { key: secret, body: { forwardPowerW: 100, reflectedPowerW: 4 } })).status).toBe(200);
  });
});
