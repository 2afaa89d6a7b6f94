import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import path from 'node:path';
import type { Page } from 'playwright-core';
import { baseUrl, fixtures, LAPTOP, openBrowser, PHONE, serverRunning, sidewaysOverflow, signIn, snapshot, watchConsole, type Browser } from './support.ts';

/** Every calculation on the Try page, by the value its choice carries. */
const CALCULATIONS = ['mismatch', 'reflection', 'line', 'refer', 'match', 'attenuation', 'batch'] as const;
/** The ways the line form describes a line; "saved" appears once a feed line is saved. */
const LINE_FORMS = ['cable', 'spec', 'rlgc'] as const;

async function settle(page: Page): Promise<void> {
  await page.waitForLoadState('networkidle');
  // Charts and tables draw after their data arrives.
  await page.waitForTimeout(300);
}

async function expectFits(page: Page, where: string): Promise<void> {
  expect(await sidewaysOverflow(page), `${where} scrolls sideways`).toBeLessThanOrEqual(0);
}

describe.skipIf(!serverRunning)('a first visit', () => {
  it('logs nothing in red in the browser console, on the status page and on sign-in', async () => {
    const browser = await openBrowser(LAPTOP);
    try {
      const { page } = browser;
      const seen = watchConsole(page);
      await page.goto(`${baseUrl}/`);
      await page.getByRole('heading', { name: 'Status', level: 1 }).waitFor();
      await settle(page);
      await page.goto(`${baseUrl}/keys`);
      await page.waitForURL(/\/sign-in/);
      await settle(page);
      expect(seen.problems).toEqual([]);
    } finally {
      await browser.close();
    }
  });

  it('tells a wrong password in plain words and offers the way to a new one, with no API path', async () => {
    const browser = await openBrowser(PHONE, { touch: true });
    try {
      const { page } = browser;
      await page.goto(`${baseUrl}/sign-in`);
      await page.getByLabel('E-mail').fill('admin@kestrel-ridge.example');
      await page.getByLabel('Password', { exact: true }).fill('not the password at all');
      await page.getByRole('button', { name: 'Sign in', exact: true }).tap();
      const refusal = page.getByTestId('sign-in-refusal');
      await refusal.waitFor();
      expect(await refusal.textContent()).toContain('The e-mail or the password is wrong');
      expect(await page.locator('main').textContent()).not.toContain('/api/v1');
      await page.getByRole('link', { name: 'Forgot the password?' }).waitFor();
    } finally {
      await browser.close();
    }
  });
});

for (const [label, viewport] of [
  ['a laptop (1280 × 800)', LAPTOP],
  ['a phone (390 × 844)', PHONE],
] as const) {
  const touch = viewport.width < 768;
  const tag = `fit-${viewport.width}`;

  describe.skipIf(!serverRunning)(`the console on ${label}, signed in as the demo admin`, () => {
    let browser: Browser;
    let seen: { problems: string[] };

    /** A tap on a phone, a click on a laptop. */
    async function press(page: Page, selector: string): Promise<void> {
      if (touch) await page.locator(selector).tap();
      else await page.locator(selector).click();
    }

    beforeAll(async () => {
      browser = await openBrowser(viewport, { touch });
      seen = watchConsole(browser.page);
      await signIn(browser.page);
    });

    afterAll(async () => {
      await browser?.close();
    });

    it('fills the pages with data to show: a key, a sweep', async () => {
      const { page } = browser;
      await page.goto(`${baseUrl}/keys`);
      await page.getByLabel('Name', { exact: true }).fill(`Harbour marine tablet ${viewport.width}`);
      await page.getByTestId('issue-key').click();
      await page.getByTestId('close-key-dialog').click();
      await page.goto(`${baseUrl}/sweeps`);
      await page.locator('#sw-file').setInputFiles(path.join(fixtures, 'millbrook-vertical-v2.s1p'));
      await page.getByTestId('upload-sweep').click();
      await page.waitForURL(/\/sweeps\/[0-9a-f-]{36}$/);
      await page.getByTestId('sweep-summary').waitFor();
    });

    it('lets every calculation on Try be chosen, and no form scrolls the page sideways', async () => {
      const { page } = browser;
      await page.goto(`${baseUrl}/try`);
      await page.getByRole('heading', { name: 'Try', level: 1 }).waitFor();
      await settle(page);
      for (const calculation of CALCULATIONS) {
        await press(page, `[data-choice="${calculation}"]`);
        await expect(page.locator(`input[name="try-endpoint"][value="${calculation}"]`).isChecked()).resolves.toBe(true);
        await expectFits(page, `Try › ${calculation}`);
        if (calculation === 'line') {
          for (const form of LINE_FORMS) {
            await press(page, `[data-choice="${form}"]`);
            await expectFits(page, `Try › line › ${form}`);
          }
          await snapshot(page, `${tag}-try-line`);
        }
      }
      await press(page, '[data-choice="mismatch"]');
      await snapshot(page, `${tag}-try`);
    });

    it('walks every page without sideways scroll, saving a screenshot of each', async () => {
      const { page } = browser;
      const pages: [string, string, string][] = [
        ['/', 'Status', 'status'],
        ['/sweeps', 'Sweeps', 'sweeps'],
        ['/feedlines', 'Feed lines', 'feedlines'],
        ['/cables', 'Cables', 'cables'],
        ['/keys', 'Keys', 'keys'],
        ['/usage', 'Usage', 'usage'],
        ['/admin', 'Admin', 'admin-members'],
        ['/sign-in', 'Sign in', 'sign-in'],
        ['/password-reset', 'New password', 'password-reset'],
        ['/no-such-page', 'Page not found', 'not-found'],
      ];
      for (const [pathname, heading, name] of pages) {
        await page.goto(`${baseUrl}${pathname}`);
        await page.getByRole('heading', { name: heading, level: 1 }).waitFor();
        await settle(page);
        await expectFits(page, pathname);
        await snapshot(page, `${tag}-${name}`);
      }
      await page.goto(`${baseUrl}/sweeps`);
      await page.locator('td a').first().click();
      await page.getByTestId('sweep-summary').waitFor();
      await settle(page);
      await expectFits(page, 'a sweep');
      await snapshot(page, `${tag}-sweep`);

      await page.goto(`${baseUrl}/admin`);
      for (const [section, name] of [
        ['keys', 'admin-keys'],
        ['audit', 'admin-audit'],
        ['mail', 'admin-mail'],
      ] as const) {
        await press(page, `[data-choice="${section}"]`);
        await settle(page);
        await expectFits(page, `Admin › ${section}`);
        await snapshot(page, `${tag}-${name}`);
      }
    });

    it.runIf(!touch)('answers a 5,000-item batch file with a running count, a paged table and a curl command that names the file', async () => {
      const { page } = browser;
      await page.goto(`${baseUrl}/try`);
      await press(page, '[data-choice="batch"]');
      const lines = Array.from({ length: 5000 }, (_, i) =>
        JSON.stringify(i === 3 ? { op: 'mismatch', input: { swr: 0.5 } } : { op: 'mismatch', input: { swr: 1 + (i % 90) / 100 } }),
      );
      await page.locator('#bt-file').setInputFiles({ name: 'ridge-readings.ndjson', mimeType: 'application/x-ndjson', buffer: Buffer.from(lines.join('\n') + '\n') });
      await expect(page.getByTestId('batch-file').textContent()).resolves.toContain('5,000 items');
      // Every text the running count shows, however briefly.
      await page.evaluate(() => {
        const seenCounts: string[] = [];
        (window as unknown as { seenCounts: string[] }).seenCounts = seenCounts;
        new MutationObserver(() => {
          const text = document.querySelector('[data-testid="batch-progress"]')?.textContent;
          if (text) seenCounts.push(text.trim());
        }).observe(document.body, { subtree: true, childList: true, characterData: true });
      });
      await page.getByTestId('send').click();
      await expect(page.getByTestId('batch-summary').textContent({ timeout: 30_000 })).resolves.toBe('5,000 items: 4,999 computed, 1 refused');
      const counts = await page.evaluate(() => (window as unknown as { seenCounts: string[] }).seenCounts);
      expect(counts.some((text) => /of 5,000 items answered/.test(text))).toBe(true);
      await expect(page.locator('[data-figure="line.4"]').textContent()).resolves.toContain('refused (422): input.swr');
      expect(await page.locator('[data-testid="batch-results"] tbody tr').count()).toBe(25);
      const curl = (await page.getByTestId('curl').textContent()) ?? '';
      expect(curl).toContain('--data-binary @batch.ndjson');
      expect(curl.length).toBeLessThan(600);
      await page.getByRole('link', { name: 'Save batch.ndjson' }).waitFor();
      await expectFits(page, 'Try › batch answer');
      await snapshot(page, `${tag}-try-batch`);
    });

    it('kept the browser console clean on every page so far', () => {
      expect(seen.problems).toEqual([]);
    });

    it('refuses a daily quota of −5 at the field instead of saving a clamped one', async () => {
      const { page } = browser;
      await page.goto(`${baseUrl}/keys`);
      const row = page.locator('tr', { hasText: `Harbour marine tablet ${viewport.width}` });
      await row.getByRole('button', { name: /Limits/ }).click();
      const patches: string[] = [];
      page.on('request', (request) => {
        if (request.method() === 'PATCH') patches.push(request.url());
      });
      await page.getByLabel('Calculation units per UTC day').fill('-5');
      await page.getByTestId('save-limits').click();
      await page.getByText('Enter 1 or more.').waitFor();
      await expect(page.locator('#quota-value').getAttribute('aria-invalid')).resolves.toBe('true');
      await expect(page.locator('#quota-value').inputValue()).resolves.toBe('-5');
      await snapshot(page, `${tag}-quota-refused`);
      expect(patches).toEqual([]);
      await page.getByRole('button', { name: 'Cancel' }).click();
    });

    it("shows the API's refusal once, at the field, in the form's words", async () => {
      const { page } = browser;
      await page.goto(`${baseUrl}/try`);
      await page.getByLabel('Forward power (W)').fill('10');
      await page.getByLabel('Reflected power (W)').fill('40');
      await page.getByTestId('send').click();
      const summary = page.getByTestId('problem-summary');
      await summary.waitFor();
      const text = (await summary.textContent()) ?? '';
      expect(text).toContain('Reflected power (W): Reflected power cannot exceed forward power');
      expect(text).not.toContain('reflectedPowerW');
      await expect(page.locator('#mm-reflectedPowerW').getAttribute('aria-invalid')).resolves.toBe('true');
      await snapshot(page, `${tag}-try-refused`);
    });

  });
}
