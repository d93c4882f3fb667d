// How quickly the run page first shows a demo run: a figure for `npm run bench` (scripts/bench-client.ts prints it),
// never a timed assertion. Measured by the browser's own clock: milliseconds from the navigation's start to the
// first frame that shows the run's heading and its rate–distortion chart.
import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, type BrowserSession } from './browser';
import { FIRST_RENDER_FILE } from './first-render-file';

// Demo accounts, team and runs from the seed (server/seed/demo.ts, server/seed/demo-content.ts).
const teamName = 'Bramblecove Seabed Survey (demo)';
const viewer = { email: 'juno@bramblecove.test', password: 'harbour-viewer-1' };
const demoRun = 'Luma 4×4 sweep';

describe('run page first render', () => {
  let server: StartedServer;
  let browser: BrowserSession | undefined;
  let runPath: string;

  beforeAll(async () => {
    server = await startServer();
    const login = await fetch(`${server.url}/api/auth/login`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(viewer) });
    const { token } = (await login.json()) as { token: string };
    const auth = { Authorization: `Bearer ${token}` };
    const me = (await (await fetch(`${server.url}/api/me`, { headers: auth })).json()) as { teams: Array<{ id: number; name: string }> };
    const teamId = me.teams.find((t) => t.name === teamName)!.id;
    const { runs } = (await (await fetch(`${server.url}/api/teams/${teamId}/runs`, { headers: auth })).json()) as { runs: Array<{ id: number; name: string }> };
    runPath = `/teams/${teamId}/runs/${runs.find((r) => r.name === demoRun)!.id}`;
  });

  afterAll(async () => {
    await browser?.close();
    await server?.stop();
  });

  it('shows a demo run\'s heading and rate–distortion chart on a fresh load, and records how long that took', async () => {
    browser = await launchBrowser();
    const { page } = browser;
    await page.goto(`${server.url}/sign-in`);
    await page.getByLabel('E-mail').fill(viewer.email);
    await page.getByLabel('Password').fill(viewer.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(/\/teams\/\d+/);

    const figures: number[] = [];
    // A cold load (nothing cached by the browser's memory cache across a new document) and two more, all signed in.
    for (let load = 0; load < 3; load += 1) {
      await page.goto(`${server.url}${runPath}`, { waitUntil: 'commit' });
      // Polled on every animation frame: the value is the page's clock (ms since its navigation began) at the first
      // frame where both are in the document.
      const shown = await page.waitForFunction((name) => {
        const heading = [...document.querySelectorAll('h1')].some((h) => h.textContent?.trim() === name);
        const chart = document.querySelector('section[aria-labelledby="run-rd"] svg');
        return heading && chart ? performance.now() : false;
      }, demoRun, { polling: 'raf', timeout: 60_000 });
      figures.push(Math.round((await shown.jsonValue()) as number));
    }
    expect(await page.getByRole('heading', { level: 1, name: demoRun }).isVisible()).toBe(true);
    const report = { page: 'run', run: demoRun, firstLoadMs: figures[0], laterLoadsMs: figures.slice(1), measuredAt: new Date().toISOString() };
    mkdirSync(path.dirname(FIRST_RENDER_FILE), { recursive: true });
    writeFileSync(FIRST_RENDER_FILE, `${JSON.stringify(report, null, 2)}\n`);
    console.log(`run page first render: ${figures[0]} ms (then ${figures.slice(1).join(', ')} ms)`);
  });
});
