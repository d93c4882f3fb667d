import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, type BrowserSession } from './browser';

// Demo accounts, team and finished runs from the seed (server/seed/demo.ts, server/seed/demo-content.ts).
const teamName = 'Bramblecove Seabed Survey (demo)';
const admin = { email: 'ada@bramblecove.test', password: 'harbour-admin-1' };

describe('renaming and deleting a run in the browser', () => {
  let server: StartedServer;
  let browser: BrowserSession | undefined;
  let teamId: number;
  let run: { id: number; name: string };
  let token: string;
  let otherRun: string;

  beforeAll(async () => {
    server = await startServer();
    const login = await fetch(`${server.url}/api/auth/login`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(admin) });
    token = ((await login.json()) as { token: string }).token;
    const headers = { Authorization: `Bearer ${token}` };
    const me = (await (await fetch(`${server.url}/api/me`, { headers })).json()) as { teams: Array<{ id: number; name: string }> };
    teamId = me.teams.find((t) => t.name === teamName)!.id;
    const { runs } = (await (await fetch(`${server.url}/api/teams/${teamId}/runs`, { headers })).json()) as { runs: Array<{ id: number; name: string; state: string }> };
    run = runs.find((r) => r.state === 'succeeded')!;
    expect(run).toBeDefined();
    otherRun = runs.find((r) => r.id !== run.id)!.name;
  });

  afterEach(async () => {
    await browser?.close();
    browser = undefined;
  });

  afterAll(async () => {
    await server?.stop();
  });

  it('renames a run, then deletes it behind a confirmation and leaves it off the runs list', async () => {
    browser = await launchBrowser({ viewport: { width: 1280, height: 720 } });
    const { page } = browser;
    await page.goto(`${server.url}/sign-in`);
    await page.getByLabel('E-mail').fill(admin.email);
    await page.getByLabel('Password').fill(admin.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(/\/teams\/\d+/);

    await page.goto(`${server.url}/teams/${teamId}/runs/${run.id}`);
    const heading = page.getByRole('main').getByRole('heading', { level: 1 });
    await expect.poll(() => heading.textContent()).toBe(run.name);

    await page.getByRole('button', { name: 'Rename' }).click();
    const renameDialog = page.getByRole('dialog', { name: 'Rename this run' });
    await renameDialog.getByLabel('Run name').fill('Harbour sweep, renamed');
    await renameDialog.getByRole('button', { name: 'Save name' }).click();
    await expect.poll(() => heading.textContent()).toBe('Harbour sweep, renamed');

    await page.getByRole('button', { name: 'Delete run' }).click();
    const deleteDialog = page.getByRole('dialog', { name: 'Delete this run?' });
    // Cancelling keeps it.
    await deleteDialog.getByRole('button', { name: 'Cancel' }).click();
    expect((await fetch(`${server.url}/api/teams/${teamId}/runs/${run.id}`, { headers: { Authorization: `Bearer ${token}` } })).status).toBe(200);

    await page.getByRole('button', { name: 'Delete run' }).click();
    await deleteDialog.getByRole('button', { name: 'Delete run' }).click();
    await page.waitForURL(new RegExp(`/teams/${teamId}/runs$`));
    // The list has loaded (another run shows) and the deleted one is gone from it.
    await expect.poll(() => page.getByRole('main').textContent()).toContain(otherRun);
    expect(await page.getByRole('main').textContent()).not.toContain('Harbour sweep, renamed');
    expect((await fetch(`${server.url}/api/teams/${teamId}/runs/${run.id}`, { headers: { Authorization: `Bearer ${token}` } })).status).toBe(404);
  });
});
