// The codebook-model views of a demo codebook in the browser: the anomaly heat map and ranked blocks, and the
// denoise view with its PSNRs, each with the model's caution; each computed by a job started with its Compute
// button (opening the page starts none) and followed, and shown again from its stored result.
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { MODEL_CAUTION } from '../../server/contracts';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo accounts, team and runs from the seed (server/seed/demo.ts, server/seed/demo-content.ts).
const teamName = 'Bramblecove Seabed Survey (demo)';
const viewer = { email: 'juno@bramblecove.test', password: 'harbour-viewer-1' };
const demoRun = 'Luma 4×4 sweep';

/** Pixels of the heat map canvas with any tint drawn (alpha above 0). */
function tinted(page: Page) {
  return page.getByTestId('anomaly-heat-map').evaluate((canvas: HTMLCanvasElement) => {
    const { data } = canvas.getContext('2d')!.getImageData(0, 0, canvas.width, canvas.height);
    let n = 0;
    for (let i = 3; i < data.length; i += 4) if (data[i] > 0) n += 1;
    return n;
  });
}

const psnrOf = async (page: Page, view: string) => Number(/PSNR ([\d.]+)/.exec((await page.getByTestId(`psnr-${view}`).textContent()) ?? '')?.[1]);

describe('codebook model views', () => {
  let server: StartedServer;
  let browser: BrowserSession | undefined;
  let codebookPath: string;

  beforeAll(async () => {
    server = await startServer();
    const login = await fetch(`${server.url}/api/auth/login`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(viewer) });
    const { token } = (await login.json()) as { token: string };
    const auth = { Authorization: `Bearer ${token}` };
    const me = (await (await fetch(`${server.url}/api/me`, { headers: auth })).json()) as { teams: Array<{ id: number; name: string }> };
    const teamId = me.teams.find((t) => t.name === teamName)!.id;
    const { runs } = (await (await fetch(`${server.url}/api/teams/${teamId}/runs`, { headers: auth })).json()) as { runs: Array<{ id: number; name: string }> };
    const runId = runs.find((r) => r.name === demoRun)!.id;
    const { codebooks } = (await (await fetch(`${server.url}/api/teams/${teamId}/codebooks`, { headers: auth })).json()) as { codebooks: Array<{ id: number; runId: number | null; bits: number }> };
    const codebook = codebooks.find((c) => c.runId === runId && c.bits === 6)!;
    codebookPath = `/teams/${teamId}/codebooks/${codebook.id}`;
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  const modelJobs = async () => (await server.db.knex('jobs').whereIn('kind', ['anomaly', 'denoise']).select('kind', 'state')) as { kind: string; state: string }[];

  it('starts no job when a viewer opens the page, and one per panel when its Compute button is pressed', async () => {
    browser = await launchBrowser();
    const { page } = browser;
    await page.goto(`${server.url}/sign-in`);
    await page.getByLabel('E-mail').fill(viewer.email);
    await page.getByLabel('Password').fill(viewer.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(/\/teams\/\d+/);
    await page.goto(`${server.url}${codebookPath}`);

    // The map, the ranked list and the denoising each looked for a stored result, found none and offer to compute.
    const compute = page.getByRole('button', { name: 'Compute', exact: true });
    await expect.poll(() => compute.count(), { timeout: 30_000 }).toBe(3);
    expect(await page.getByText('not computed yet').count()).toBe(3);
    expect(await modelJobs()).toEqual([]);

    await compute.first().click();
    await expect.poll(async () => (await modelJobs()).length, { timeout: 30_000 }).toBe(1);
    expect((await modelJobs())[0].kind).toBe('anomaly');
    // The other two buttons start theirs; each button gives way to its job's progress once pressed.
    for (let left = 2; left > 0; left -= 1) {
      await expect.poll(() => compute.count(), { timeout: 30_000 }).toBe(left);
      await compute.first().click();
    }
    await expect.poll(() => page.getByTestId('anomaly-flagged').textContent(), { timeout: 30_000 }).toMatch(/^\d+ of \d+ blocks$/);
    await expect.poll(() => tinted(page)).toBeGreaterThan(0);
    await expect.poll(() => page.getByTestId('anomaly-list').locator('li').count(), { timeout: 30_000 }).toBe(12);

    await expect.poll(() => page.getByTestId('denoise-views').getByRole('img').count(), { timeout: 60_000 }).toBe(4);
    // σ = 20 on textures of the training distribution: the posterior mean is well above the noisy image.
    expect(await psnrOf(page, 'mean')).toBeGreaterThan(await psnrOf(page, 'noisy'));
    expect(await page.getByText(MODEL_CAUTION).count()).toBe(2);
    // Each panel's figures came from a job that succeeded on the workers: a map, a ranked list and a denoising.
    const jobs = await modelJobs();
    expect(jobs.filter((j) => j.state === 'succeeded').map((j) => j.kind).sort()).toEqual(['anomaly', 'anomaly', 'denoise']);
    await page.getByTestId('denoise-views').scrollIntoViewIfNeeded();
    await saveScreenshot(page, 'studio-codebook-model');
  });

  it('shows the stored results when the page is opened again, without starting another job', async () => {
    const { page } = browser!;
    await page.reload();
    await expect.poll(() => page.getByTestId('anomaly-flagged').textContent(), { timeout: 30_000 }).toMatch(/^\d+ of \d+ blocks$/);
    await expect.poll(() => page.getByTestId('anomaly-list').locator('li').count(), { timeout: 30_000 }).toBe(12);
    await expect.poll(() => page.getByTestId('denoise-views').getByRole('img').count(), { timeout: 30_000 }).toBe(4);
    expect(await page.getByRole('button', { name: 'Compute', exact: true }).count()).toBe(0);
    expect(await modelJobs()).toHaveLength(3);
  });
});
