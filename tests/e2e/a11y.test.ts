import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { AxeResults } from 'axe-core';
import type { Page } from 'playwright-core';
import { baseUrl, DEMO_ADMIN, LAPTOP, openBrowser, serverRunning, signIn, storeLineSweep, type Browser } from './support.ts';

/**
 * axe-core's own bundle, evaluated through the browser's debugging protocol: the console's
 * Content-Security-Policy forbids inline scripts, and the audit must not need it loosened.
 */
const axeSource = readFileSync(createRequire(import.meta.url).resolve('axe-core/axe.min.js'), 'utf8');
/** WCAG 2.0 and 2.1, levels A and AA. */
const WCAG_TAGS = ['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa'];

type Theme = 'light' | 'dark';

interface Finding {
  where: string;
  rule: string;
  impact: string;
  nodes: string[];
}

async function settle(page: Page): Promise<void> {
  await page.waitForLoadState('networkidle');
  // Async panels and charts draw after their data arrives; transitions end.
  await page.waitForTimeout(400);
}

/** The WCAG A/AA violations axe finds on the page as it is now. */
async function audit(page: Page, where: string): Promise<Finding[]> {
  if (!(await page.evaluate(() => 'axe' in window))) await page.evaluate(axeSource);
  const violations = await page.evaluate(async (tags) => {
    const { axe } = window as unknown as { axe: { run(context: Document, options: object): Promise<AxeResults> } };
    const result = await axe.run(document, { runOnly: { type: 'tag', values: tags }, resultTypes: ['violations'] });
    return result.violations.map((v) => ({
      rule: v.id,
      impact: v.impact ?? '',
      nodes: v.nodes.map((n) => `${n.target.join(' ')} — ${(n.failureSummary ?? '').replace(/\s+/g, ' ')}`),
    }));
  }, WCAG_TAGS);
  return violations.map((v) => ({ where, ...v }));
}

async function openThemed(theme: Theme): Promise<Browser> {
  const browser = await openBrowser(LAPTOP);
  await browser.context.addInitScript((mode) => localStorage.setItem('gammaline.theme', mode), theme);
  return browser;
}

async function visit(page: Page, pathname: string, theme: Theme): Promise<void> {
  await page.goto(`${baseUrl}${pathname}`);
  // Dark waits for the component library's dark theme to load before it shows.
  await page.waitForFunction((mode) => document.documentElement.dataset.theme === mode, theme);
  await settle(page);
}

function report(findings: Finding[]): string {
  return findings.map((f) => `${f.where}: ${f.rule} (${f.impact}, ${f.nodes.length})\n    ${f.nodes.slice(0, 6).join('\n    ')}`).join('\n');
}

for (const theme of ['light', 'dark'] as const) {
  describe.skipIf(!serverRunning)(`WCAG 2.1 A and AA by axe-core, ${theme} theme`, () => {
    let browser: Browser;

    beforeAll(async () => {
      browser = await openThemed(theme);
    });

    afterAll(async () => {
      await browser?.close();
    });

    it('finds nothing on the pages a visitor who is not signed in can open', async () => {
      const { page } = browser;
      const findings: Finding[] = [];
      for (const pathname of ['/', '/sign-in', '/sign-in?next=%2Fkeys', '/invitation?token=unknown', '/password-reset?token=unknown', '/no-such-page']) {
        await visit(page, pathname, theme);
        findings.push(...(await audit(page, pathname)));
      }
      expect(findings, report(findings)).toEqual([]);
    });

    it('finds nothing on any page signed in as the admin, nor in the dialogs and panels they open', async () => {
      const { page } = browser;
      await signIn(page);
      const findings: Finding[] = [];
      for (const pathname of ['/', '/try', '/sweeps', '/feedlines', '/cables', '/keys', '/usage', '/not-allowed', '/admin']) {
        await visit(page, pathname, theme);
        findings.push(...(await audit(page, pathname)));
      }

      for (const section of ['All keys', 'Limits for new keys', 'Audit trail', 'Sent mail (local)']) {
        await page.getByText(section, { exact: true }).click();
        await settle(page);
        findings.push(...(await audit(page, `/admin, ${section}`)));
      }

      // A sweep of 20 m of line ending in 100 Ω, so that distance to fault has a peak to list.
      const id = await storeLineSweep(page, 'Audit line');
      await visit(page, `/sweeps/${id}`, theme);
      await page.locator('.sweep-charts canvas').first().waitFor();
      findings.push(...(await audit(page, '/sweeps/:id')));
      const panel = page.getByTestId('fault-distance');
      await panel.getByRole('button', { name: 'Find reflections' }).click();
      await page.getByTestId('fault-peaks').waitFor();
      await settle(page);
      findings.push(...(await audit(page, '/sweeps/:id, distance to fault')));

      await visit(page, '/try', theme);
      await page.getByLabel('Forward power (W)').fill('100');
      await page.getByLabel('Reflected power (W)').fill('4');
      await page.getByTestId('send').click();
      await page.locator('[data-figure="swr"]').waitFor();
      await settle(page);
      findings.push(...(await audit(page, '/try, with an answer')));

      await visit(page, '/keys', theme);
      await page.getByLabel('Name', { exact: true }).fill(`Audit ${theme}`);
      await page.getByTestId('issue-key').click();
      await page.getByTestId('key-secret').waitFor();
      await settle(page);
      findings.push(...(await audit(page, '/keys, the new key dialog')));
      await page.getByTestId('close-key-dialog').click();
      await page.getByTestId('key-secret').waitFor({ state: 'detached' });
      await page.locator('tr', { hasText: `Audit ${theme}` }).getByRole('button', { name: /Revoke/ }).click();
      await page.getByRole('button', { name: 'Revoke the key' }).waitFor();
      await settle(page);
      findings.push(...(await audit(page, '/keys, the revoke dialog')));
      await page.getByRole('button', { name: 'Revoke the key' }).click();
      await page.locator('tr', { hasText: `Audit ${theme}` }).getByText('revoked').waitFor();
      await settle(page);
      findings.push(...(await audit(page, '/keys, with a revoked key')));

      expect(findings, report(findings)).toEqual([]);
    }, 180_000);
  });
}

/** What a screen reader would call the focused element: its label, its aria-label or its text. */
async function focusedName(page: Page): Promise<string> {
  return page.evaluate(() => {
    const el = document.activeElement as HTMLElement | null;
    if (!el || el === document.body) return '';
    const labelledBy = el.getAttribute('aria-labelledby');
    const byId = labelledBy ? document.getElementById(labelledBy)?.textContent : undefined;
    const label = (el as HTMLInputElement).labels?.[0]?.textContent;
    return (el.getAttribute('aria-label') ?? byId ?? label ?? el.textContent ?? '').replace(/\s+/g, ' ').trim();
  });
}

/** Presses Tab (Shift+Tab with `back`) until the focused element's name matches; fails after `limit` presses. */
async function tabTo(page: Page, name: RegExp, options: { back?: boolean; limit?: number } = {}): Promise<void> {
  const seen: string[] = [];
  for (let presses = 0; presses < (options.limit ?? 60); presses += 1) {
    await page.keyboard.press(options.back ? 'Shift+Tab' : 'Tab');
    const now = await focusedName(page);
    if (name.test(now)) return;
    seen.push(now);
  }
  throw new Error(`Tab never reached ${name}; it went through: ${seen.join(' | ')}`);
}

/** True when the focused element (or the text box around it) draws an outline of at least 2 px. */
async function focusRingShows(page: Page): Promise<boolean> {
  return page.evaluate(() => {
    const el = document.activeElement as HTMLElement | null;
    if (!el) return false;
    const ringed = el.closest('.n-input, .n-base-selection') ?? el;
    const style = getComputedStyle(ringed);
    return style.outlineStyle !== 'none' && Number.parseFloat(style.outlineWidth) >= 2;
  });
}

async function focusInside(page: Page, selector: string): Promise<boolean> {
  return page.evaluate((s) => Boolean(document.activeElement?.closest(s)), selector);
}

for (const theme of ['light', 'dark'] as const) {
  describe.skipIf(!serverRunning)(`the console with the keyboard alone, ${theme} theme`, () => {
    let browser: Browser;

    beforeAll(async () => {
      browser = await openThemed(theme);
    });

    afterAll(async () => {
      await browser?.close();
    });

    it('signs in, issues a key, copies it and revokes it, with a visible focus ring and dialogs that hold the focus', async () => {
      const { page } = browser;
      await visit(page, '/sign-in', theme);

      // The first Tab lands on the skip link, which shows itself and jumps past the navigation.
      await page.keyboard.press('Tab');
      expect(await focusedName(page)).toBe('Skip to content');
      expect(await focusRingShows(page)).toBe(true);
      const skip = await page.evaluate(() => document.activeElement!.getBoundingClientRect().top);
      expect(skip).toBeGreaterThanOrEqual(0);
      await page.keyboard.press('Enter');
      expect(await page.evaluate(() => document.activeElement?.id)).toBe('main');

      await tabTo(page, /^E-mail/);
      expect(await focusRingShows(page)).toBe(true);
      await page.keyboard.type(DEMO_ADMIN.email);
      await tabTo(page, /^Password/);
      await page.keyboard.type(DEMO_ADMIN.password);
      await page.keyboard.press('Enter');
      await page.waitForURL((url) => !url.pathname.startsWith('/sign-in'));
      await settle(page);

      await page.keyboard.press('Tab');
      expect(await focusedName(page)).toBe('Skip to content');
      await tabTo(page, /^Keys$/);
      expect(await focusRingShows(page)).toBe(true);
      await page.keyboard.press('Enter');
      await page.getByRole('heading', { name: 'Keys', level: 1 }).waitFor();
      await settle(page);

      const name = `Keyboard ${theme}`;
      await tabTo(page, /^Name/);
      await page.keyboard.type(name);
      await tabTo(page, /^Issue the key$/);
      expect(await focusRingShows(page)).toBe(true);
      await page.keyboard.press('Enter');
      const secretBox = page.getByTestId('key-secret');
      await secretBox.waitFor();
      const secret = (await secretBox.textContent())?.trim() ?? '';
      expect(secret).toMatch(/^gml_/);
      await settle(page);

      // The dialog holds the focus: a round of Tab presses never leaves it.
      for (let presses = 0; presses < 8; presses += 1) {
        await page.keyboard.press('Tab');
        expect(await focusInside(page, '[role="dialog"]'), `Tab ${presses + 1} left the dialog`).toBe(true);
      }
      await tabTo(page, /^Copy the key$/, { limit: 8 });
      expect(await focusRingShows(page)).toBe(true);
      await page.keyboard.press('Enter');
      await page.getByRole('button', { name: 'Copied' }).waitFor();
      await expect(page.evaluate(() => navigator.clipboard.readText())).resolves.toBe(secret);
      await tabTo(page, /^I have stored it, close$/, { limit: 8 });
      await page.keyboard.press('Enter');
      await secretBox.waitFor({ state: 'detached' });
      // Closed, the dialog gives the focus back to the button that opened it.
      await page.waitForFunction(() => document.activeElement?.textContent?.trim() === 'Issue the key');

      const row = page.locator('tr', { hasText: name });
      await tabTo(page, new RegExp(`^Revoke ${name}$`));
      expect(await focusRingShows(page)).toBe(true);
      await page.keyboard.press('Enter');
      await page.getByRole('button', { name: 'Revoke the key' }).waitFor();
      await settle(page);
      expect(await focusInside(page, '[role="dialog"]')).toBe(true);
      await tabTo(page, /^Revoke the key$/, { limit: 8 });
      expect(await focusInside(page, '[role="dialog"]')).toBe(true);
      await page.keyboard.press('Enter');
      await row.getByText('revoked').waitFor();
    });
  });
}
