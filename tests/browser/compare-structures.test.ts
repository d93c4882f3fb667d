// The compare page draws every structure of every run as its own curve: the demo's full-search and mean-removed runs
// beside a tree run and a λ sweep trained here through the API, on the demo's held-out tiles.
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo account, team, sets and runs from the seed (server/seed/demo.ts, server/seed/demo-content.ts).
const teamName = 'Bramblecove Seabed Survey (demo)';
const engineer = { email: 'tomas@bramblecove.test', password: 'harbour-engineer-1' };
const demoRuns = ['Luma 4×4 sweep', 'Luma 4×4 mean-removed sweep'];

type Api = { token: string; teamId: number };
type Series = { id: string; structure: string; label: string; enoughPoints: boolean };

async function apiAs(server: StartedServer, account: { email: string; password: string }): Promise<Api> {
  const login = await fetch(`${server.url}/api/auth/login`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(account) });
  const { token } = (await login.json()) as { token: string };
  const me = (await (await fetch(`${server.url}/api/me`, { headers: { Authorization: `Bearer ${token}` } })).json()) as { teams: Array<{ id: number; name: string }> };
  return { token, teamId: me.teams.find((t) => t.name === teamName)!.id };
}

async function call<T>(server: StartedServer, api: Api, path: string, body?: object): Promise<T> {
  const res = await fetch(`${server.url}/api/teams/${api.teamId}${path}`, {
    method: body ? 'POST' : 'GET',
    headers: { Authorization: `Bearer ${api.token}`, ...(body ? { 'Content-Type': 'application/json' } : {}) },
    body: body ? JSON.stringify(body) : undefined,
  });
  expect(res.status, path).toBe(body ? 201 : 200);
  return (await res.json()) as T;
}

/** Waits until the run and every job of it (evaluation included) have succeeded. */
async function untilEvaluated(server: StartedServer, api: Api, id: number): Promise<void> {
  for (let i = 0; i < 1200; i += 1) {
    const { run } = await call<{ run: { state: string; error: string | null; jobs: { state: string }[] } }>(server, api, `/runs/${id}`);
    if (run.state === 'succeeded' && run.jobs.every((j) => j.state === 'succeeded')) return;
    if (['failed', 'cancelled'].includes(run.state)) throw new Error(`run ${id} ended ${run.state}: ${run.error}`);
    await new Promise((r) => setTimeout(r, 250));
  }
  throw new Error(`run ${id} did not finish`);
}

async function signIn(page: Page, server: StartedServer) {
  await page.goto(`${server.url}/sign-in`);
  await page.getByLabel('E-mail').fill(engineer.email);
  await page.getByLabel('Password').fill(engineer.password);
  await page.getByRole('button', { name: 'Sign in' }).click();
  await page.waitForURL(/\/teams\/\d+/);
}

describe('the compare page with several structures', () => {
  let server: StartedServer;
  let api: Api;
  let browser: BrowserSession | undefined;
  let ids: number[];

  beforeAll(async () => {
    server = await startServer();
    api = await apiAs(server, engineer);
    const { runs } = await call<{ runs: { id: number; name: string }[] }>(server, api, '/runs');
    const demo = demoRuns.map((name) => runs.find((r) => r.name === name)!.id);
    for (const id of demo) await untilEvaluated(server, api, id);
    const { run } = await call<{ run: { normalized: { trainingImageIds: number[]; heldOutImageIds: number[] } } }>(server, api, `/runs/${demo[0]}`);
    // The demo runs' own images, so every curve is measured on the same held-out tiles.
    const base = { trainingImageIds: run.normalized.trainingImageIds, heldOutImageIds: run.normalized.heldOutImageIds, patch: { width: 4, height: 4 }, maxIterations: 10, seed: 3 };
    const tree = await call<{ run: { id: number } }>(server, api, '/runs', { ...base, name: 'Tree 4×4', bits: { from: 1, to: 3 }, structure: 'tree' });
    const sweep = await call<{ run: { id: number } }>(server, api, '/runs', { ...base, name: 'λ sweep 4×4', bits: 4, lambdas: [20, 300, 3000] });
    for (const id of [tree.run.id, sweep.run.id]) await untilEvaluated(server, api, id);
    ids = [...demo, tree.run.id, sweep.run.id];
  }, 600_000);

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('shows one curve per structure of each run, in the legend, the list of curves and the BD table', async () => {
    const shown = await call<{ runs: { name: string; series: Series[]; baselines: Record<string, unknown[]> }[] }>(server, api, `/compare?runs=${ids.join(',')}`);
    const series = shown.runs.flatMap((r) => r.series.map((s) => ({ ...s, name: `${r.name} · ${s.label}` })));
    // The demo's plain and mean-removed full search, the tree, and the λ run's full-search codebook and its sweep.
    expect(series.map((s) => s.structure)).toEqual(['full', 'full', 'tree-balanced', 'full', 'entropy-constrained']);
    expect(series.map((s) => s.name)).toEqual([
      'Luma 4×4 sweep · Full search',
      'Luma 4×4 mean-removed sweep · Full search, mean-removed (4-bit mean)',
      'Tree 4×4 · Tree-structured, balanced',
      'λ sweep 4×4 · Full search',
      'λ sweep 4×4 · Entropy-constrained (λ sweep)',
    ]);

    browser = await launchBrowser({ viewport: { width: 1280, height: 800 } });
    const { page } = browser;
    await signIn(page, server);
    await page.goto(`${server.url}/teams/${api.teamId}/compare?runs=${ids.join(',')}`);
    const chart = page.getByRole('img', { name: /one curve per structure/ });
    await expect.poll(() => chart.count(), { timeout: 30_000 }).toBe(1);
    const codecCurves = Object.values(shown.runs[0].baselines).filter((points) => points.length > 0).length;
    expect(await chart.locator('path[data-series]').count()).toBe(series.length + codecCurves);
    const legend = await page.getByRole('list', { name: 'Legend' }).textContent();
    for (const s of series) expect(legend).toContain(s.name);

    const listed = page.getByTestId('compare-series');
    expect(await listed.count()).toBe(series.length);
    expect(await page.getByTestId('series-structure').allTextContents()).toEqual(series.map((s) => s.label));
    // The one-codebook full-search curve of the λ run is drawn, and its BD figures are left out with the reason.
    const short = series.filter((s) => !s.enoughPoints);
    expect(short.map((s) => s.name)).toEqual(['λ sweep 4×4 · Full search']);
    expect(await listed.nth(3).getByTestId('series-bd-state').textContent()).toMatch(/^not enough points: 1 usable of the 3 a BD figure needs$/);

    const bdTable = page.getByRole('table', { name: /BD-rate and BD-PSNR/ });
    for (const s of series) expect(await bdTable.getByRole('cell', { name: s.name, exact: true }).count()).toBeGreaterThan(0);
    expect(await bdTable.getByText(/^not enough points: λ sweep 4×4 · Full search has 1 usable/).count()).toBeGreaterThan(0);
    expect(await page.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth)).toBe(true);
    await saveScreenshot(page, 'compare-structures');
  });
});
