import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import path from 'node:path';
import { apiCall, baseUrl, fixtures, openBrowser, serverRunning, signIn, snapshot, storeLineSweep, type Browser } from './support.ts';

describe.skipIf(!serverRunning)('the console in Chromium, against the server npm start runs', () => {
  let browser: Browser;
  /** Issued in the key scenario, revoked in the last one. */
  let issued: { secret: string; displayStart: string } | undefined;

  beforeAll(async () => {
    browser = await openBrowser();
  });

  afterAll(async () => {
    await browser?.close();
  });

  it('sends a visitor who is not signed in to the sign-in page, then signs the demo admin in', async () => {
    const { page } = browser;
    await page.goto(`${baseUrl}/keys`);
    await page.waitForURL(/\/sign-in\?next=(%2F|\/)keys/);
    await snapshot(page, 'sign-in');
    await signIn(page);
    await page.goto(`${baseUrl}/keys`);
    await page.getByRole('heading', { name: 'Keys', level: 1 }).waitFor();
    await expect(page.getByTestId('signed-in-as').textContent()).resolves.toContain('Demo Admin');
  });

  it('issues a key, shows it once with a warning, and never again', async () => {
    const { page } = browser;
    await page.getByLabel('Name', { exact: true }).fill('Ridge logger e2e');
    await page.getByTestId('issue-key').click();
    const secretBox = page.getByTestId('key-secret');
    await secretBox.waitFor();
    const secret = (await secretBox.textContent())?.trim() ?? '';
    expect(secret).toMatch(/^gml_[A-Za-z0-9_-]{43}$/);
    await expect(page.getByTestId('shown-once').textContent()).resolves.toContain('you will not see this key again');
    await page.getByTestId('copy-key').click();
    await page.getByRole('button', { name: 'Copied' }).waitFor();
    await expect(page.evaluate(() => navigator.clipboard.readText())).resolves.toBe(secret);
    await snapshot(page, 'key-created');
    await page.getByTestId('close-key-dialog').click();
    await secretBox.waitFor({ state: 'detached' });

    const row = page.locator('tr', { hasText: 'Ridge logger e2e' });
    const displayStart = (await row.getAttribute('data-key-start')) ?? '';
    expect(secret.startsWith(displayStart)).toBe(true);
    // The page shows only the start from now on; a reload does not bring the secret back.
    await page.reload();
    await row.waitFor();
    expect(await page.content()).not.toContain(secret);
    await snapshot(page, 'keys');
    issued = { secret, displayStart };
  });

  it('runs a calculation on the Try page and shows what the API answers for the same body', async () => {
    const { page } = browser;
    await page.goto(`${baseUrl}/try`);
    await page.getByLabel('Forward power (W)').fill('100');
    await page.getByLabel('Reflected power (W)').fill('4');
    await page.getByTestId('send').click();
    const shown = page.locator('[data-figure="swr"]');
    await shown.waitFor();
    const direct = await apiCall('/api/v1/mismatch', { key: issued?.secret, body: { forwardPowerW: 100, reflectedPowerW: 4 } });
    expect(direct.status).toBe(200);
    const answer = direct.body as { swr: number; returnLossDb: number };
    const shownSwr = Number.parseFloat((await shown.textContent()) ?? '');
    expect(Math.abs(shownSwr - answer.swr)).toBeLessThanOrEqual(5e-3);
    const raw = JSON.parse((await page.getByTestId('raw-json').textContent()) ?? '{}') as unknown;
    expect(raw).toEqual(answer);
    const curl = (await page.getByTestId('curl').textContent()) ?? '';
    expect(curl).toContain(`'${baseUrl}/api/v1/mismatch'`);
    expect(curl).toContain(`-d '{"forwardPowerW":100,"reflectedPowerW":4}'`);
    await snapshot(page, 'try-mismatch');
  });

  it('shows a caution from the API prominently on the Try page', async () => {
    const { page } = browser;
    await page.locator('[data-choice="line"]').click();
    await page.getByLabel('Power into the line (W)').fill('10000');
    await page.getByLabel('Length (m)').fill('2');
    await page.getByLabel('Resistance R (Ω)').first().fill('10000');
    await page.getByTestId('send').click();
    await page.getByTestId('caution').first().waitFor();
    await snapshot(page, 'try-line-caution');
  });

  it('uploads a Touchstone file with a progress bar and shows its summary, charts and Smith chart', async () => {
    const { page } = browser;
    await page.goto(`${baseUrl}/sweeps`);
    await page.locator('#sw-file').setInputFiles(path.join(fixtures, 'millbrook-vertical-v2.s1p'));
    await page.getByLabel('Acceptance: SWR at most').fill('2');
    await page.getByTestId('upload-sweep').click();
    await page.waitForURL(/\/sweeps\/[0-9a-f-]{36}$/);
    const summary = page.getByTestId('sweep-summary');
    await summary.waitFor();
    await expect(summary.textContent()).resolves.toContain('3 points');
    const id = page.url().split('/').pop()!;
    const stored = await page.evaluate(async (sweepId) => (await fetch(`/api/v1/sweeps/${sweepId}`)).json(), id) as { summary: { minSwr: number } };
    const shownMin = Number.parseFloat((await page.getByTestId('min-swr').textContent()) ?? '');
    // The console shows SWR to two decimals everywhere.
    expect(Math.abs(shownMin - stored.summary.minSwr)).toBeLessThanOrEqual(5e-3);
    await page.getByTestId('sweep-verdict').getByText(/Passes|Fails/).waitFor();
    await page.locator('figure.smith svg').waitFor();
    await page.locator('.sweep-charts canvas').first().waitFor();
    await snapshot(page, 'sweep');
    const csv = await page.evaluate(async (href) => (await fetch(href ?? '')).text(), await page.getByText('Download the points (CSV)').getAttribute('href'));
    expect(csv.split('\n').filter((line) => line.trim()).length).toBeGreaterThanOrEqual(4);
    await page.goto(`${baseUrl}/sweeps`);
    await page.locator('td a').first().waitFor();
    await snapshot(page, 'sweeps');
  });

  it('finds a reflection along a line on the sweep page and judges the sweep again by a mask', async () => {
    const { page } = browser;
    await page.goto(`${baseUrl}/sweeps`);
    const id = await storeLineSweep(page, 'Line with a far end of 100 ohm');
    await page.goto(`${baseUrl}/sweeps/${id}`);
    const panel = page.getByTestId('fault-distance');
    await panel.locator('[data-choice="velocityFactor"]').click();
    await page.locator('#fault-vf').fill('0.66');
    await panel.getByRole('button', { name: 'Find reflections' }).click();
    const peaks = page.getByTestId('fault-peaks');
    await peaks.waitFor();
    const first = Number.parseFloat((await peaks.locator('tbody tr').first().locator('td').nth(1).textContent()) ?? '');
    expect(Math.abs(first - 20)).toBeLessThan(0.5);
    await panel.locator('canvas').first().waitFor();
    await snapshot(page, 'sweep-faults');

    const verdict = page.getByTestId('sweep-verdict');
    await verdict.getByText('Judge by other figures').click();
    await page.locator('#judge-mask').fill('1.6');
    await page.getByTestId('sweep-judge').getByRole('button', { name: 'Judge again' }).click();
    // |Γ| = 1/3 everywhere is an SWR of 2 (textbook), above 1.6.
    await verdict.getByText('Fails').waitFor();
  });

  it('opens the remaining pages without errors and saves a screenshot of each', async () => {
    const { page } = browser;
    const errors: string[] = [];
    page.on('pageerror', (error) => errors.push(error.message));
    for (const [pathname, heading] of [
      ['/', 'Status'],
      ['/usage', 'Usage'],
      ['/cables', 'Cables'],
      ['/feedlines', 'Feed lines'],
    ] as const) {
      await page.goto(`${baseUrl}${pathname}`);
      await page.getByRole('heading', { name: heading, level: 1 }).waitFor();
      await page.waitForLoadState('networkidle');
      await snapshot(page, pathname === '/' ? 'status' : pathname.slice(1));
    }
    expect(errors).toEqual([]);
  });

  it('revokes a key after confirmation, and the API then refuses it with 401', async () => {
    const { page } = browser;
    expect(issued).toBeDefined();
    await page.goto(`${baseUrl}/keys`);
    const row = page.locator(`tr[data-key-start="${issued!.displayStart}"]`);
    await row.getByRole('button', { name: /Revoke/ }).click();
    await page.getByRole('button', { name: 'Revoke the key' }).click();
    await row.getByText('revoked').waitFor();
    const refused = await apiCall('/api/v1/mismatch', { key: issued!.secret, body: { swr: 1.5 } });
    expect(refused.status).toBe(401);
  });

  it("invites a member; the captured e-mail's link lets them join and sign in as a developer", async () => {
    const { page } = browser;
    const email = 'oskar.brandt@kestrel-ridge.example';
    await page.goto(`${baseUrl}/admin`);
    await page.getByLabel('E-mail').fill(email);
    await page.getByTestId('send-invitation').click();
    await page.getByRole('cell', { name: email, exact: true }).waitFor();
    await snapshot(page, 'admin-members');

    await page.getByText('Audit trail', { exact: true }).click();
    await page.getByRole('cell', { name: 'sent an invitation' }).first().waitFor();
    await snapshot(page, 'admin-audit');

    await page.getByText('Sent mail (local)', { exact: true }).click();
    const message = page.locator(`[data-mail-to="${email}"]`).first();
    // The capture server stores the message a moment after the API answered; refresh until it is there.
    for (let tries = 0; tries < 20 && (await message.count()) === 0; tries += 1) {
      await Promise.all([page.waitForResponse((r) => r.url().includes('/api/v1/mail')), page.getByRole('button', { name: 'Refresh' }).click()]);
    }
    await message.click();
    const link = page.getByTestId('mail-message').locator('a[href*="/invitation?token="]');
    await link.waitFor();
    await snapshot(page, 'admin-mail');
    await link.click();
    await page.waitForURL(/\/invitation\?token=/);
    await page.getByLabel('Your name').fill('Oskar Brandt');
    await page.getByLabel('New password').fill('four quiet ridge antennas');
    await page.getByLabel('Same password again').fill('four quiet ridge antennas');
    await page.getByRole('button', { name: 'Join' }).click();
    await page.getByTestId('joined').waitFor();
    await snapshot(page, 'invitation-accepted');

    await signIn(page, { email, password: 'four quiet ridge antennas' });
    await expect(page.getByTestId('signed-in-as').textContent()).resolves.toContain('developer');
    await page.goto(`${baseUrl}/admin`);
    await page.waitForURL(/\/not-allowed/);
    await expect(page.locator('nav[aria-label="Console pages"]').textContent()).resolves.not.toContain('Admin');
  });
});
