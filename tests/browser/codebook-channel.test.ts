// The channel panel of a demo codebook in the browser: PSNR against bit-error rate (chart and table, measured and
// expected), the raw rate beside the coded size, the firmware zip link, and reordering saved as a new codebook.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo accounts, team and runs from the seed (server/seed/demo.ts, server/seed/demo-content.ts).
const teamName = 'Bramblecove Seabed Survey (demo)';
const engineer = { email: 'tomas@bramblecove.test', password: 'harbour-engineer-1' };
const demoRun = 'Luma 4×4 sweep';

describe('codebook channel panel', () => {
  let server: StartedServer;
  let browser: BrowserSession | undefined;
  let codebookPath: string;
  let codebookId: number;
  let teamId: number;

  beforeAll(async () => {
    server = await startServer();
    const login = await fetch(`${server.url}/api/auth/login`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(engineer) });
    const { token } = (await login.json()) as { token: string };
    const auth = { Authorization: `Bearer ${token}` };
    const me = (await (await fetch(`${server.url}/api/me`, { headers: auth })).json()) as { teams: Array<{ id: number; name: string }> };
    teamId = me.teams.find((t) => t.name === teamName)!.id;
    const { runs } = (await (await fetch(`${server.url}/api/teams/${teamId}/runs`, { headers: auth })).json()) as { runs: Array<{ id: number; name: string }> };
    const runId = runs.find((r) => r.name === demoRun)!.id;
    const { codebooks } = (await (await fetch(`${server.url}/api/teams/${teamId}/codebooks`, { headers: auth })).json()) as { codebooks: Array<{ id: number; runId: number | null; bits: number }> };
    codebookId = codebooks.find((c) => c.runId === runId && c.bits === 6)!.id;
    codebookPath = `/teams/${teamId}/codebooks/${codebookId}`;
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('draws PSNR against BER with the expected curve, offers the firmware zip, and saves a reordered codebook', async () => {
    browser = await launchBrowser();
    const { page } = browser;
    await page.goto(`${server.url}/sign-in`);
    await page.getByLabel('E-mail').fill(engineer.email);
    await page.getByLabel('Password').fill(engineer.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(/\/teams\/\d+/);
    await page.goto(`${server.url}${codebookPath}`);

    await expect.poll(() => page.getByTestId('raw-rate').textContent(), { timeout: 30_000 }).toMatch(/bpp/);
    expect(await page.getByRole('link', { name: 'Firmware bundle .zip' }).getAttribute('href')).toBe(`/api/teams/${teamId}/codebooks/${codebookId}/firmware`);

    await page.getByRole('button', { name: 'Simulate the channel' }).click();
    await expect.poll(() => page.getByTestId('channel-table').locator('tbody tr').count(), { timeout: 60_000 }).toBe(5);
    expect(await page.locator('path[data-series="measured"]').count()).toBe(1);
    expect(await page.locator('path[data-series="expected"]').count()).toBe(1);
    const firstRow = await page.getByTestId('channel-table').locator('tbody tr').first().textContent();
    expect(firstRow).toMatch(/^1e-5.*dB.*dB/);
    await page.getByTestId('channel-table').scrollIntoViewIfNeeded();
    await saveScreenshot(page, 'studio-codebook-channel');

    await page.getByRole('button', { name: 'Reorder for the channel' }).click();
    const status = page.getByRole('status').filter({ hasText: 'Expected channel distortion' });
    await expect.poll(() => status.count(), { timeout: 60_000 }).toBe(1);
    const link = status.getByRole('link');
    expect(await link.textContent()).toMatch(/reordered for BER 0.01$/);
    await link.click();
    // The new codebook's page, not this one's.
    await page.waitForURL((url) => /\/codebooks\/\d+$/.test(url.pathname) && !url.pathname.endsWith(`/codebooks/${codebookId}`));
    await expect.poll(() => page.getByRole('heading', { level: 1 }).textContent()).toMatch(/reordered for BER 0.01/);
  });
});
