import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { inject } from 'vitest';

export const baseUrl = inject('baseUrl');
/** False outside `npm test`; the suites then skip, and global-setup says why. */
export const serverRunning = baseUrl !== '';

export const DEMO_ADMIN = { email: 'admin@kestrel-ridge.example', password: 'gammaline-demo-2026' } as const;

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
export const artifacts = path.join(root, 'test-artifacts');
export const fixtures = path.join(root, 'tests', 'fixtures', 'sweeps');

export interface Browser {
  context: BrowserContext;
  page: Page;
  close(): Promise<void>;
}

/** The two widths the console is checked at: a phone held upright and a laptop. */
export const PHONE = { width: 390, height: 844 } as const;
export const LAPTOP = { width: 1280, height: 800 } as const;

/**
 * Debian's Chromium, headless, with a profile of its own that is removed afterwards. `touch` makes
 * it a phone: taps instead of clicks, and the mobile viewport rules.
 */
export async function openBrowser(viewport: { width: number; height: number } = { width: 1280, height: 900 }, options: { touch?: boolean } = {}): Promise<Browser> {
  const profile = mkdtempSync(path.join(os.tmpdir(), 'gammaline-e2e-'));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: '/usr/bin/chromium',
    headless: true,
    viewport,
    hasTouch: options.touch ?? false,
    isMobile: options.touch ?? false,
    args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
  });
  context.setDefaultTimeout(15_000);
  await context.grantPermissions(['clipboard-read', 'clipboard-write'], { origin: baseUrl });
  const page = context.pages()[0] ?? (await context.newPage());
  return {
    context,
    page,
    async close() {
      await context.close();
      rmSync(profile, { recursive: true, force: true });
    },
  };
}

export async function signIn(page: Page, who: { email: string; password: string } = DEMO_ADMIN): Promise<void> {
  await page.goto(`${baseUrl}/sign-in`);
  await page.getByLabel('E-mail').fill(who.email);
  await page.getByLabel('Password', { exact: true }).fill(who.password);
  await page.getByRole('button', { name: 'Sign in', exact: true }).click();
  await page.waitForURL((url) => !url.pathname.startsWith('/sign-in'));
  // On a phone the name is in the header's narrow layout and may be hidden; it is there all the same.
  await page.getByTestId('signed-in-as').waitFor({ state: 'attached' });
}

/** A full-page screenshot under test-artifacts/ (git-ignored). */
export async function snapshot(page: Page, name: string): Promise<void> {
  mkdirSync(artifacts, { recursive: true });
  await page.screenshot({ path: path.join(artifacts, `${name}.png`), fullPage: true });
}

/** The API called directly, as an integrator's program would. */
/**
 * Stores, as the signed-in member of `page`, a sweep of 20 m of line (VF 0.66) ending in 100 Ω on
 * 50 Ω: Γ = (1/3)·e^(−j2βl), β = 2πf/(c·VF) (lossless line, textbook); 64 points, 1 to 64 MHz, so
 * distance to fault has one reflection to find, at 20 m. Returns the sweep's id.
 */
export async function storeLineSweep(page: Page, name: string): Promise<string> {
  return page.evaluate(async (sweepName) => {
    const { csrfToken } = await (await fetch('/api/v1/session')).json();
    const points = Array.from({ length: 64 }, (_, i) => {
      const f = (i + 1) * 1e6;
      const phase = (-2 * 2 * Math.PI * f * 20) / (299_792_458 * 0.66);
      return { frequencyHz: f, reflection: { re: Math.cos(phase) / 3, im: Math.sin(phase) / 3 } };
    });
    const res = await fetch('/api/v1/sweeps', { method: 'POST', headers: { 'content-type': 'application/json', 'x-csrf-token': csrfToken }, body: JSON.stringify({ name: sweepName, points }) });
    return (await res.json()).id as string;
  }, name);
}

export async function apiCall(pathname: string, init: { method?: string; key?: string; body?: unknown } = {}): Promise<{ status: number; body: unknown }> {
  const headers: Record<string, string> = { accept: 'application/json' };
  if (init.key) headers.authorization = `Bearer ${init.key}`;
  if (init.body !== undefined) headers['content-type'] = 'application/json';
  const response = await fetch(`${baseUrl}${pathname}`, {
    method: init.method ?? (init.body === undefined ? 'GET' : 'POST'),
    headers,
    body: init.body === undefined ? undefined : JSON.stringify(init.body),
  });
  const text = await response.text();
  let body: unknown = text;
  try {
    body = JSON.parse(text);
  } catch {
    // Not JSON; keep the text.
  }
  return { status: response.status, body };
}

/**
 * Collects what would show as red in the browser's console: console errors, uncaught exceptions and
 * answers with an error status (Chromium logs each of those as "Failed to load resource").
 */
export function watchConsole(page: Page): { problems: string[] } {
  const problems: string[] = [];
  page.on('console', (message) => {
    if (message.type() === 'error') problems.push(`console: ${message.text()}`);
  });
  page.on('pageerror', (error) => problems.push(`exception: ${error.message}`));
  page.on('response', (response) => {
    if (response.status() >= 400) problems.push(`${response.status()} ${response.request().method()} ${new URL(response.url()).pathname}`);
  });
  return { problems };
}

/** How far the page scrolls sideways beyond the window; 0 when everything fits. */
export async function sidewaysOverflow(page: Page): Promise<number> {
  return page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth);
}
