// The rate planner on the new-run form, and the evaluations pages (a batch queued, followed to the end, its matrix
// sorted and downloaded), with the demo team's sets and codebooks.
import type { Page } from 'playwright-core';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { planTrainingVectors } from '../../server/contracts';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo accounts, team, sets and runs from the seed (server/seed/demo.ts, server/seed/demo-content.ts).
const teamName = 'Bramblecove Seabed Survey (demo)';
const engineer = { email: 'tomas@bramblecove.test', password: 'harbour-engineer-1' };

type Api = { token: string; teamId: number };

async function apiAs(server: StartedServer, account: { email: string; password: string }): Promise<Api> {
  const login = await fetch(`${server.url}/api/auth/login`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(account) });
  const { token } = (await login.json()) as { token: string };
  const me = (await (await fetch(`${server.url}/api/me`, { headers: { Authorization: `Bearer ${token}` } })).json()) as { teams: Array<{ id: number; name: string }> };
  return { token, teamId: me.teams.find((t) => t.name === teamName)!.id };
}

async function get<T>(server: StartedServer, api: Api, path: string): Promise<T> {
  const res = await fetch(`${server.url}/api/teams/${api.teamId}${path}`, { headers: { Authorization: `Bearer ${api.token}` } });
  expect(res.status, path).toBe(200);
  return (await res.json()) as T;
}

async function signIn(page: Page, server: StartedServer, account: { email: string; password: string }) {
  await page.goto(`${server.url}/sign-in`);
  await page.getByLabel('E-mail').fill(account.email);
  await page.getByLabel('Password').fill(account.password);
  await page.getByRole('button', { name: 'Sign in' }).click();
  await page.waitForURL(/\/teams\/\d+/);
}

describe('planning and batch evaluation in the browser', () => {
  let server: StartedServer;
  let api: Api;
  let browser: BrowserSession | undefined;
  let sets: Array<{ id: number; name: string }>;

  beforeAll(async () => {
    server = await startServer();
    api = await apiAs(server, engineer);
    sets = (await get<{ imageSets: typeof sets }>(server, api, '/image-sets')).imageSets;
  });

  afterEach(async () => {
    await browser?.close();
    browser = undefined;
  });

  afterAll(async () => {
    await server?.stop();
  });

  it('lists the configurations that reach a target rate and fills the form with the one picked', async () => {
    const training = sets.find((s) => s.name.endsWith('training'))!;
    const { images } = await get<{ images: Array<{ width: number; height: number }> }>(server, api, `/image-sets/${training.id}/images`);
    browser = await launchBrowser();
    const { page } = browser;
    await signIn(page, server, engineer);
    await page.goto(`${server.url}/teams/${api.teamId}/runs/new`);
    await page.getByLabel('Training set').selectOption(String(training.id));

    await page.getByLabel('Target rate (bpp)').fill('0.375');
    const table = page.getByRole('table', { name: 'Configurations that reach the target rate' });
    await page.getByRole('button', { name: /^Show all \d+ configurations$/ }).click();
    // 4 wide × 8 high is 32 pixels: 0.375 bpp is 12 bits a block, b = 8 with the mean in m = 4 bits.
    const row = table.getByRole('row').filter({ has: page.getByRole('button', { name: 'Use Mean-removed, 4 × 8 patches, b = 8, m = 4' }) });
    const cells = await row.getByRole('cell').allTextContents();
    expect(cells.slice(0, 7)).toEqual(['Mean-removed', '4×8', '8', '4', '0.375', '256', '32 KiB']);
    // Vectors a codeword from the set's own image sizes, by the planner's rule (non-overlapping 4×8 patches).
    const perCodeword = planTrainingVectors(images, { width: 4, height: 8 }) / 256;
    // Shown to one decimal, rounded down, digits grouped with a narrow no-break space.
    const shown = Number(/^[\d\u202f]+(\.\d+)?/.exec(cells[7])![0].replace(/\u202f/g, ''));
    expect(shown).toBeCloseTo(Math.floor(perCodeword * 10) / 10, 6);
    expect(cells[7].includes('under 40')).toBe(perCodeword < 40);

    await row.getByRole('button', { name: 'Use Mean-removed, 4 × 8 patches, b = 8, m = 4' }).click();
    expect(await page.getByLabel('Width (px)').inputValue()).toBe('4');
    expect(await page.getByLabel('Height (px)').inputValue()).toBe('8');
    expect(await page.getByLabel('Mean removal').inputValue()).toBe('4');
    expect(await page.getByRole('slider').first().getAttribute('aria-valuetext')).toBe('b = 8, 256 codewords');
    await table.scrollIntoViewIfNeeded();
    await saveScreenshot(page, 'studio-rate-planner');
  });

  it('queues a batch of codebooks on both demo sets, follows it to the end and sorts and downloads its matrix', async () => {
    const { codebooks } = await get<{ codebooks: Array<{ id: number; name: string; size: number; runId: number | null }> }>(server, api, '/codebooks');
    const chosen = codebooks.filter((c) => c.size === 4 || c.size === 32).slice(0, 3);
    expect(chosen.length).toBeGreaterThanOrEqual(2);
    browser = await launchBrowser();
    const { page } = browser;
    await signIn(page, server, engineer);
    await page.goto(`${server.url}/teams/${api.teamId}/evaluations`);
    const form = page.getByRole('form', { name: 'New evaluation batch' });
    for (const c of chosen) await form.getByRole('checkbox', { name: new RegExp(`^${c.name.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')} — K = ${c.size},`) }).check();
    for (const s of sets) await form.getByRole('checkbox', { name: new RegExp(`^${s.name.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')} — `) }).check();
    await form.getByRole('button', { name: `Evaluate ${chosen.length} codebooks on ${sets.length} sets` }).click();
    await page.waitForURL(/\/evaluations\/\d+$/);
    const jobId = Number(/\/evaluations\/(\d+)$/.exec(page.url())![1]);

    await expect.poll(() => page.getByTestId('batch-state').textContent(), { timeout: 120_000, interval: 500 }).toBe('Finished');
    const matrix = page.getByRole('table', { name: 'Evaluation matrix' });
    await expect.poll(() => matrix.locator('tbody tr').count()).toBe(chosen.length);
    const { batch } = await get<{ batch: { cells: Array<{ codebookId: number; setIndex: number; result: { psnr: number | null } }>; codebooks: Array<{ id: number; name: string }> } }>(server, api, `/evaluation-batches/${jobId}`);
    expect(batch.cells.every((c) => c.result !== null)).toBe(true);

    // Sorting by the first set's column puts the best PSNR on that set first.
    await matrix.getByRole('button', { name: sets[0].name }).click();
    const firstSet = batch.cells.filter((c) => c.setIndex === 0).sort((a, b) => (b.result.psnr ?? Infinity) - (a.result.psnr ?? Infinity));
    const expectedOrder = firstSet.map((c) => batch.codebooks.find((b) => b.id === c.codebookId)!.name);
    const shownOrder = (await matrix.locator('tbody th').allTextContents()).map((t) => t.replace(/K = \d+$/, '').trim());
    expect(shownOrder).toEqual(expectedOrder);
    const shownPsnr = await matrix.locator('tbody tr td:nth-of-type(1)').allTextContents();
    expect(shownPsnr).toEqual(firstSet.map((c) => (c.result.psnr === null ? '∞ (exact)' : c.result.psnr.toFixed(2))));

    const csvHref = await page.getByRole('link', { name: 'Download CSV' }).getAttribute('href');
    expect(csvHref).toBe(`/api/teams/${api.teamId}/evaluation-batches/${jobId}/matrix?format=csv`);
    const csv = await page.request.get(`${server.url}${csvHref}`);
    expect(csv.status()).toBe(200);
    expect((await csv.text()).split('\r\n')[0]).toBe('codebook,codebook_name,bits,codebook_size,image_set,set_name,images,bpp_fixed,bpp_entropy,bpp_actual,mse,psnr_db,ssim');
    await saveScreenshot(page, 'studio-evaluation-matrix');
  });

  it('follows an imported codebook\u2019s evaluation from its page to the evaluation\u2019s own page, to the end', async () => {
    const { codebooks } = await get<{ codebooks: Array<{ id: number; size: number }> }>(server, api, '/codebooks');
    const source = codebooks.find((c) => c.size === 16)!;
    const document = await get<object>(server, api, `/codebooks/${source.id}/export`);
    const imported = await fetch(`${server.url}/api/teams/${api.teamId}/codebooks/import?name=${encodeURIComponent('Harbour copy for evaluation')}`, {
      method: 'POST',
      headers: { Authorization: `Bearer ${api.token}`, 'Content-Type': 'application/json' },
      body: JSON.stringify(document),
    });
    expect(imported.status).toBe(201);
    const { codebook } = (await imported.json()) as { codebook: { id: number } };
    const heldOut = sets.find((s) => s.name.endsWith('held-out'))!;

    browser = await launchBrowser();
    const { page } = browser;
    await signIn(page, server, engineer);
    await page.goto(`${server.url}/teams/${api.teamId}/codebooks/${codebook.id}`);
    const form = page.getByRole('form', { name: 'Evaluate on a held-out set' });
    await form.getByLabel('Held-out images of').selectOption({ label: `${heldOut.name} — 3 held-out images` });
    await form.getByRole('button', { name: 'Evaluate' }).click();
    await form.getByRole('link', { name: 'follow its progress' }).click();
    await page.waitForURL(/\/evaluations\/\d+$/);
    await expect.poll(() => page.getByTestId('batch-state').textContent(), { timeout: 120_000, interval: 500 }).toBe('Finished');
    const matrix = page.getByRole('table', { name: 'Evaluation matrix' });
    expect(await matrix.locator('tbody th').allTextContents()).toEqual(['Harbour copy for evaluationK = 16']);
    expect(await matrix.locator('thead th').nth(1).textContent()).toBe(`${heldOut.name} (3 chosen images)`);
    expect(await matrix.locator('tbody td').first().textContent()).toMatch(/^\d+\.\d\d$/);
  });
});
