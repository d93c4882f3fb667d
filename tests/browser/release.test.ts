// Review and release in the browser: an engineer proposes a demo codebook, an admin approves it, and the printable
// report opens with every section; in print media the studio's navigation is hidden.
import { writeFileSync } from 'node:fs';
import path from 'node:path';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo accounts, team and runs from the seed (server/seed/demo.ts, server/seed/demo-content.ts).
const teamName = 'Bramblecove Seabed Survey (demo)';
const engineer = { email: 'tomas@bramblecove.test', password: 'harbour-engineer-1' };
const admin = { email: 'ada@bramblecove.test', password: 'harbour-admin-1' };
const demoRun = 'Luma 4×4 sweep';

async function signIn(page: Page, base: string, who: { email: string; password: string }) {
  await page.goto(`${base}/sign-in`);
  await page.getByLabel('E-mail').fill(who.email);
  await page.getByLabel('Password').fill(who.password);
  await page.getByRole('button', { name: 'Sign in' }).click();
  await page.waitForURL(/\/teams\/\d+/);
}

describe('review and release', () => {
  let server: StartedServer;
  const browsers: BrowserSession[] = [];
  let teamId: number;
  let codebookPath: string;

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
    codebookPath = `/teams/${teamId}/codebooks/${codebooks.find((c) => c.runId === runId && c.bits === 6)!.id}`;
  });

  afterAll(async () => {
    for (const b of browsers) await b.close();
    await server?.stop();
  });

  it('is proposed by an engineer, approved by an admin, and prints its report without the studio navigation', async () => {
    const proposer = await launchBrowser();
    browsers.push(proposer);
    await signIn(proposer.page, server.url, engineer);
    await proposer.page.goto(`${server.url}${codebookPath}`);
    const form = proposer.page.getByRole('form', { name: 'Propose for release' });
    await form.getByLabel('Release name').fill('bramblecove-luma');
    await form.getByLabel('Version').fill('1.0.0');
    await form.getByLabel('Note for the reviewer').fill('The 6-bit table: best PSNR per byte on the harbour tiles.');
    await form.getByRole('button', { name: 'Propose for release' }).click();
    await proposer.page.waitForURL(/\/releases\/\d+$/);
    const releasePath = new URL(proposer.page.url()).pathname;
    await expect.poll(() => proposer.page.getByText('Awaiting review').count()).toBeGreaterThan(0);
    // The proposer is offered no review of their own proposal.
    expect(await proposer.page.getByRole('form', { name: 'Review' }).count()).toBe(0);

    const reviewer = await launchBrowser();
    browsers.push(reviewer);
    const { page } = reviewer;
    await signIn(page, server.url, admin);
    await page.goto(`${server.url}${releasePath}`);
    const review = page.getByRole('form', { name: 'Review' });
    await review.getByLabel('Comment').fill('Worst tiles checked against the originals.');
    await review.getByRole('button', { name: 'Approve and release' }).click();
    await expect.poll(() => page.getByText('Released', { exact: true }).count()).toBeGreaterThan(0);
    await expect.poll(() => page.getByRole('list', { name: 'Review thread' }).locator('li').count()).toBe(2);
    await saveScreenshot(page, 'release-approved');

    await page.getByRole('link', { name: 'Release report' }).click();
    await page.waitForURL(/\/report$/);
    const sections = ['Configuration', 'Training data and held-out images', 'Rate and distortion against JPEG, WebP and AVIF', 'Per image', 'Worst tiles', 'Decoder cost', 'Channel robustness', 'Checksums', 'Sign-off'];
    await expect.poll(() => page.locator('article.release-report h2').allTextContents(), { timeout: 60_000 }).toEqual(sections.map((s, i) => `${i + 1}. ${s}`));
    expect(await page.getByTestId('report-images').locator('tbody tr').count()).toBeGreaterThan(0);
    expect(await page.getByTestId('worst-tiles').locator('li').count()).toBeGreaterThan(0);
    // The tile crops load from the reconstruction views (naturalWidth > 0 once the PNG has decoded).
    await expect
      .poll(() => page.getByTestId('worst-tiles').locator('img').first().evaluate((img: HTMLImageElement) => img.complete && img.naturalWidth), { timeout: 60_000 })
      .toBeGreaterThan(0);
    expect(await page.getByText('Ada Ferrow').count()).toBeGreaterThan(0);

    const nav = page.getByRole('navigation', { name: 'Team' });
    expect(await nav.isVisible()).toBe(true);
    await page.emulateMedia({ media: 'print' });
    expect(await nav.isVisible()).toBe(false);
    expect(await page.getByTestId('report-actions').isVisible()).toBe(false);
    expect(await page.locator('header').filter({ hasText: 'Cellwright' }).first().isVisible()).toBe(false);
    expect(await page.getByRole('heading', { name: 'bramblecove-luma 1.0.0' }).isVisible()).toBe(true);
    // Chromium's own print to PDF, as a person's "Save as PDF" does.
    const pdf = await page.pdf({ format: 'A4', printBackground: true });
    expect(pdf.subarray(0, 5).toString('latin1')).toBe('%PDF-');
    writeFileSync(path.join(path.dirname(await saveScreenshot(page, 'release-report-print')), 'release-report.pdf'), pdf);
    await page.emulateMedia({ media: 'screen' });

    await page.goto(`${server.url}/teams/${teamId}/activity?action=release.approved`);
    const rows = page.getByTestId('activity-table').locator('tbody tr');
    await expect.poll(() => rows.count()).toBe(1);
    expect(await rows.first().textContent()).toContain('Ada Ferrow');
    await saveScreenshot(page, 'activity-log');
  });
});
