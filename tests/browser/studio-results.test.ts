import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import type { Page } from 'playwright-core';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { codebookDocumentSchema } from '../../server/engine/format/codebook-schema';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo accounts, team, sets and runs from the seed (server/seed/demo.ts, server/seed/demo-content.ts).
const teamName = 'Bramblecove Seabed Survey (demo)';
const engineer = { email: 'tomas@bramblecove.test', password: 'harbour-engineer-1' };
const viewer = { email: 'juno@bramblecove.test', password: 'harbour-viewer-1' };
const demoRuns = ['Luma 4×4 sweep', 'Luma 4×4 mean-removed sweep'];

type Api = { token: string; teamId: number };

async function apiAs(server: StartedServer, account: { email: string; password: string }): Promise<Api> {
  const login = await fetch(`${server.url}/api/auth/login`, {
    method: 'POST',
    headers: { 'Content-Type': 'application/json' },
    body: JSON.stringify(account),
  });
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

/** Reads the atlas canvas back and counts pixels that are neither the gutter tone nor transparent. */
function atlasInk(page: Page) {
  return page.getByTestId('codeword-atlas').evaluate((canvas: HTMLCanvasElement) => {
    const { data } = canvas.getContext('2d')!.getImageData(0, 0, canvas.width, canvas.height);
    const tones = new Set<number>();
    let drawn = 0;
    for (let i = 0; i < data.length; i += 4) {
      if (data[i + 3] === 0) continue;
      const gutter = data[i] === 230 && data[i + 1] === 234 && data[i + 2] === 236;
      if (!gutter) {
        drawn += 1;
        tones.add(data[i]);
      }
    }
    return { drawn, tones: tones.size };
  });
}

describe('studio results in the browser', () => {
  let server: StartedServer;
  let api: Api;
  let browser: BrowserSession | undefined;
  let runs: Array<{ id: number; name: string; state: string }>;

  beforeAll(async () => {
    server = await startServer();
    api = await apiAs(server, engineer);
    runs = (await get<{ runs: typeof runs }>(server, api, '/runs')).runs;
  });

  afterEach(async () => {
    await browser?.close();
    browser = undefined;
  });

  afterAll(async () => {
    await server?.stop();
  });

  it('follows a new run to the end, then shows its rate–distortion curve against JPEG', async () => {
    const { imageSets } = await get<{ imageSets: Array<{ id: number; name: string }> }>(server, api, '/image-sets');
    const training = imageSets.find((s) => s.name.endsWith('training'))!;
    const heldOut = imageSets.find((s) => s.name.endsWith('held-out'))!;
    const created = await fetch(`${server.url}/api/teams/${api.teamId}/runs`, {
      method: 'POST',
      headers: { Authorization: `Bearer ${api.token}`, 'Content-Type': 'application/json' },
      body: JSON.stringify({ name: 'Browser check 4×4', trainingSetId: training.id, heldOutSetId: heldOut.id, patch: { width: 4, height: 4 }, bits: { from: 1, to: 3 }, init: 'split', seed: 5 }),
    });
    expect(created.status).toBe(201);
    const { run } = (await created.json()) as { run: { id: number } };

    browser = await launchBrowser({ viewport: { width: 1280, height: 720 } });
    const { page } = browser;
    await signIn(page, server, engineer);
    await page.goto(`${server.url}/teams/${api.teamId}/runs/${run.id}`);
    await expect.poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Browser check 4×4');

    // One bar per codebook size (2, 4, 8); each reaches 100 as the stream or the poll reports the end.
    const sizes = page.getByRole('list', { name: 'Codebook sizes' }).getByRole('progressbar');
    await expect.poll(() => sizes.count()).toBe(3);
    await expect.poll(() => sizes.evaluateAll((bars) => bars.map((b) => b.getAttribute('aria-valuenow'))), { timeout: 120_000, interval: 500 }).toEqual(['100', '100', '100']);
    await expect.poll(() => page.getByText('Finished', { exact: true }).first().isVisible(), { timeout: 120_000, interval: 500 }).toBe(true);
    // One word for a finished job (never the raw "done" or "trained"), and the worker that computed it by its host.
    expect(await page.getByText(/^(done|trained)$/).count()).toBe(0);
    await expect.poll(() => page.getByText(/^Computed on .+ \([0-9a-z-]{1,8}\)/).first().isVisible(), { timeout: 30_000, interval: 500 }).toBe(true);

    // The curve: three rate definitions and the JPEG reference, each a drawn path.
    const chart = page.getByRole('img', { name: /^Rate–distortion: PSNR/ });
    await expect.poll(() => chart.locator('path[data-series]').evaluateAll((ps) => ps.map((p) => p.getAttribute('data-series'))), { timeout: 60_000 }).toEqual(
      expect.arrayContaining(['fixed', 'entropy', 'actual', 'jpeg']),
    );
    const jpegPath = await chart.locator('path[data-series="jpeg"]').getAttribute('d');
    expect(jpegPath?.match(/L/g)?.length ?? 0).toBeGreaterThan(1);
    expect(await page.getByRole('link', { name: 'Curve CSV' }).getAttribute('href')).toBe(`/api/teams/${api.teamId}/runs/${run.id}/curve?format=csv`);
    expect(await page.getByRole('link', { name: 'Run again with changes' }).getAttribute('href')).toBe(`/teams/${api.teamId}/runs/new?from=${run.id}`);
    // 1280 × 720 without horizontal scrolling.
    expect(await page.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth)).toBe(true);
    await saveScreenshot(page, 'studio-run-finished');

    // Switching the measure redraws against SSIM.
    await page.locator('label').filter({ hasText: /^SSIM$/ }).click();
    expect(await page.getByRole('radio', { name: 'SSIM' }).isChecked()).toBe(true);
    await expect.poll(() => page.getByRole('img', { name: /^Rate–distortion: SSIM/ }).isVisible()).toBe(true);

    // The per-image table sorts by a click on its header.
    const table = page.getByRole('table', { name: /Held-out images coded with/ });
    await expect.poll(() => table.getByRole('row').count()).toBe(4);
    await table.getByRole('button', { name: /Image/ }).click();
    const names = await table.locator('tbody tr td:first-child').allTextContents();
    expect(names).toEqual([...names].sort((a, b) => a.localeCompare(b, undefined, { numeric: true })));
  });

  it('opens a codebook from the chart, draws its atlas and exports a document that checks out', async () => {
    const seeded = runs.find((r) => r.name === demoRuns[0])!;
    browser = await launchBrowser();
    const { page } = browser;
    await signIn(page, server, engineer);
    await page.goto(`${server.url}/teams/${api.teamId}/runs/${seeded.id}`);
    const chart = page.getByRole('img', { name: /^Rate–distortion: PSNR/ });
    await expect.poll(() => chart.locator('path[data-series="jpeg"]').count()).toBe(1);
    // The codebooks against each codec, with the interval each figure is averaged over.
    const codecBd = page.getByRole('table', { name: /against each codec/ });
    expect(await codecBd.getByRole('cell', { name: 'WebP', exact: true }).count()).toBe(1);
    expect(await codecBd.getByTestId('bd-shared').first().textContent()).toMatch(/bpp/);
    await saveScreenshot(page, 'studio-run-seeded');

    // The largest codebook on the fixed-rate line: b = 6.
    await chart.getByRole('link', { name: /^Open VQ · fixed rate, b = 6/ }).click();
    await page.waitForURL(/\/codebooks\/\d+$/);
    await expect.poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe(`${demoRuns[0]} b6`);
    await expect.poll(async () => (await atlasInk(page)).drawn).toBeGreaterThan(64 * 16);
    // 64 different codewords give more than a handful of grey levels.
    expect((await atlasInk(page)).tones).toBeGreaterThan(8);

    await page.getByTestId('codeword-atlas').click({ position: { x: 10, y: 10 } });
    await expect.poll(() => page.getByText(/^Codeword$/).isVisible()).toBe(true);
    await expect.poll(() => page.getByTestId('encoded-bytes').textContent()).toMatch(/^[\d,]+\u2009bytes$/);
    const reconstruction = page.getByRole('img', { name: /^Reconstruction of / });
    await expect.poll(() => reconstruction.evaluate((img: HTMLImageElement) => img.complete && img.naturalWidth)).toBe(96);
    await page.getByRole('button', { name: 'Zoom in' }).click();
    const transforms = await page.locator('[data-pane] img').evaluateAll((imgs) => imgs.map((i) => (i as HTMLImageElement).style.transform));
    // All three views share one zoom and pan.
    expect(new Set(transforms).size).toBe(1);
    await expect.poll(() => page.getByText('Lossy codebooks are not validated for diagnostic medical').first().isVisible()).toBe(true);
    await saveScreenshot(page, 'studio-codebook');

    const [download] = await Promise.all([page.waitForEvent('download'), page.getByRole('link', { name: 'Export JSON' }).click()]);
    const document = JSON.parse(readFileSync((await download.path())!, 'utf8'));
    const parsed = codebookDocumentSchema.safeParse(document);
    expect(parsed.success, JSON.stringify(parsed.error?.issues.slice(0, 3))).toBe(true);
    expect(document.size).toBe(64);
    // SHA-256 over the codewords as float32 little-endian, row-major (FORMAT.md), computed here with node:crypto.
    const floats = new Float32Array((document.codewords as number[][]).flat());
    const bytes = Buffer.alloc(floats.length * 4);
    floats.forEach((v, i) => bytes.writeFloatLE(v, i * 4));
    expect(createHash('sha256').update(bytes).digest('hex')).toBe(document.checksum);
    await expect.poll(() => page.getByText(document.checksum).isVisible()).toBe(true);

    // The same codewords and the shown image's index map as NumPy files (NEP 1 version 1.0 headers read here by hand).
    const npyHeader = (bytes: Buffer) => {
      expect(bytes.subarray(0, 8)).toEqual(Buffer.from([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 1, 0]));
      return bytes.subarray(10, 10 + bytes.readUInt16LE(8)).toString('latin1');
    };
    const [npy] = await Promise.all([page.waitForEvent('download'), page.getByRole('link', { name: 'Codewords .npy' }).click()]);
    expect(npy.suggestedFilename()).toMatch(/\.codewords\.npy$/);
    const npyBytes = readFileSync((await npy.path())!);
    expect(npyHeader(npyBytes)).toContain(`'descr': '<f4', 'fortran_order': False, 'shape': (64, ${document.dimension})`);
    const header = 10 + npyBytes.readUInt16LE(8);
    expect(npyBytes.readFloatLE(header)).toBe(Math.fround(document.codewords[0][0]));
    const [map] = await Promise.all([page.waitForEvent('download'), page.getByRole('link', { name: 'Index map .npy' }).click()]);
    expect(npyHeader(readFileSync((await map.path())!))).toMatch(/'descr': '<u2', 'fortran_order': False, 'shape': \(\d+, \d+\)/);
  });

  it('compares the two demo runs and reads a BD-rate', async () => {
    const ids = demoRuns.map((name) => runs.find((r) => r.name === name)!.id);
    browser = await launchBrowser({ viewport: { width: 1280, height: 720 } });
    const { page } = browser;
    await signIn(page, server, engineer);
    await page.goto(`${server.url}/teams/${api.teamId}/compare?runs=${ids.join(',')}`);
    await expect.poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Compare runs');
    const bd = page.getByTestId('bd-rate').first();
    await expect.poll(() => bd.textContent(), { timeout: 30_000 }).toMatch(/^[+−]?\d+\.\d\d\u2009%$/);
    const chart = page.getByRole('img', { name: /^PSNR against actual/ });
    // Two runs on one held-out list, and one curve for each codec measured on it (AVIF only where sharp encodes it).
    const shown = await get<{ runs: Array<{ baselines: Record<string, unknown[]> }> }>(server, api, `/compare?runs=${ids.join(',')}`);
    const codecCurves = Object.values(shown.runs[0].baselines).filter((points) => points.length > 0).length;
    expect(codecCurves).toBeGreaterThanOrEqual(2);
    expect(await chart.locator('path[data-series]').count()).toBe(2 + codecCurves);
    expect(await page.getByRole('table', { name: /Configuration of each run/ }).getByText('differs').count()).toBeGreaterThan(0);
    // Settings by their labels, not raw keys; the BD table's first column is the run under comparison.
    const config = page.getByRole('table', { name: /Configuration of each run/ });
    expect(await config.getByText('Maximum iterations', { exact: true }).count()).toBe(1);
    expect(await config.getByText('maxIterations', { exact: true }).count()).toBe(0);
    const bdHeaders = await page.getByRole('table', { name: /BD-rate and BD-PSNR/ }).getByRole('columnheader').allTextContents();
    expect(bdHeaders[0]).toBe('Compared run');
    expect(bdHeaders).not.toContain('Test');
    expect(await page.getByText(/· Finished ·/).count()).toBeGreaterThan(0);
    expect(await page.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth)).toBe(true);
    await saveScreenshot(page, 'studio-compare');

    // The URL holds the selection: choosing another rate definition rewrites it.
    await page.getByLabel('Rate definition').selectOption('fixed');
    await page.waitForURL(/rate=fixed/);
    expect(new URL(page.url()).searchParams.get('runs')).toBe(ids.join(','));

    // Every run is compared with JPEG, WebP and AVIF; the figures name their method and shared interval.
    const bdTable = page.getByRole('table', { name: /BD-rate and BD-PSNR/ });
    for (const codec of ['JPEG', 'WebP', 'AVIF']) expect(await bdTable.getByText(`${codec} (same images)`).count()).toBe(2);
    await expect.poll(() => page.getByTestId('bd-method').textContent()).toMatch(/monotone Hermite/);
    expect(await page.getByTestId('bd-shared').first().textContent()).toMatch(/bpp/);
    await page.getByLabel('BD fitting method').selectOption('cubic');
    await page.waitForURL(/method=cubic/);
    await expect.poll(() => page.getByTestId('bd-method').textContent()).toMatch(/VCEG-M33/);
    const csvLink = page.getByRole('link', { name: 'BD table CSV' });
    expect(await csvLink.getAttribute('href')).toMatch(/\/compare\/bd-table\?runs=[\d,]+&rate=fixed&method=cubic&format=csv$/);
  });

  it('gives the viewer results to read and to export, and no control that changes anything', async () => {
    const seeded = runs.find((r) => r.name === demoRuns[1])!;
    const viewerApi = await apiAs(server, viewer);
    const { codebooks } = await get<{ codebooks: Array<{ id: number; runId: number | null }> }>(server, viewerApi, '/codebooks');
    const codebook = codebooks.find((c) => c.runId === seeded.id)!;
    browser = await launchBrowser();
    const { page } = browser;
    await signIn(page, server, viewer);
    const mutating = /cancel|run again|new run|import|export|delete|evaluate/i;

    await page.goto(`${server.url}/teams/${api.teamId}/runs`);
    await expect.poll(() => page.getByRole('table', { name: /Training runs/ }).getByRole('row').count()).toBeGreaterThan(2);
    expect(await page.getByRole('main').getByRole('button', { name: mutating }).count()).toBe(0);
    expect(await page.getByRole('main').getByRole('link', { name: mutating }).count()).toBe(0);

    await page.goto(`${server.url}/teams/${api.teamId}/runs/${seeded.id}`);
    await expect.poll(() => page.getByRole('img', { name: /^Rate–distortion/ }).isVisible()).toBe(true);
    expect(await page.getByRole('main').getByRole('button', { name: mutating }).count()).toBe(0);
    expect(await page.getByRole('main').getByRole('link', { name: mutating }).count()).toBe(0);
    await saveScreenshot(page, 'studio-run-viewer');

    await page.goto(`${server.url}/teams/${api.teamId}/codebooks/${codebook.id}`);
    await expect.poll(async () => (await atlasInk(page)).drawn).toBeGreaterThan(0);
    // Exporting only reads: a viewer may export the codewords this page already shows them, and change nothing.
    const changing = /cancel|run again|new run|import|delete|evaluate/i;
    expect(await page.getByRole('main').getByRole('link', { name: 'Export JSON' }).count()).toBe(1);
    expect(await page.getByRole('main').getByRole('link', { name: changing }).count()).toBe(0);
    expect(await page.getByRole('main').getByRole('button', { name: mutating }).count()).toBe(0);

    await page.goto(`${server.url}/teams/${api.teamId}/codebooks`);
    await expect.poll(() => page.getByRole('table', { name: 'Codebooks of this team' }).getByRole('row').count()).toBeGreaterThan(2);
    expect(await page.getByRole('main').getByRole('link', { name: mutating }).count()).toBe(0);
    await saveScreenshot(page, 'studio-codebooks-viewer');
  });
});
