import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, type BrowserSession } from './browser';

// Demo accounts from the seed (server/seed/demo.ts); the started server runs its own compute worker (WORKER_IN_SERVER).
const admin = { email: 'ada@bramblecove.test', password: 'harbour-admin-1' };
const engineer = { email: 'tomas@bramblecove.test', password: 'harbour-engineer-1' };
const viewer = { email: 'juno@bramblecove.test', password: 'harbour-viewer-1' };

describe('the workers page', () => {
  let server: StartedServer;
  let browser: BrowserSession | undefined;

  beforeAll(async () => {
    server = await startServer();
  });

  afterEach(async () => {
    await browser?.close();
    browser = undefined;
  });

  afterAll(async () => {
    await server?.stop();
  });

  async function signIn(account: { email: string; password: string }) {
    browser = await launchBrowser({ viewport: { width: 1280, height: 720 } });
    const { page } = browser;
    await page.goto(`${server.url}/sign-in`);
    await page.getByLabel('E-mail').fill(account.email);
    await page.getByLabel('Password').fill(account.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(/\/teams\/\d+/);
    return page;
  }

  it('shows an admin the server’s own worker with its threads, heartbeat and the queue depth', async () => {
    const page = await signIn(admin);
    await page.getByRole('navigation', { name: 'Team' }).getByRole('link', { name: 'Workers' }).click();
    await page.waitForURL(/\/teams\/\d+\/workers$/);
    const main = page.getByRole('main');
    await expect.poll(() => main.getByRole('heading', { level: 1 }).textContent()).toBe('Workers');
    const table = main.getByRole('table', { name: 'Compute workers' });
    await expect.poll(() => table.getByRole('row').count(), { timeout: 30_000, interval: 500 }).toBe(2);
    const headers = await table.getByRole('columnheader').allTextContents();
    expect(headers).toEqual(['Host', 'Threads', 'Current task', 'Last heartbeat', 'Started']);
    const cells = await table.getByRole('row').nth(1).getByRole('cell').allTextContents();
    expect(Number(cells[1])).toBeGreaterThanOrEqual(1);
    expect(cells[3]).toMatch(/just now|\d+ s ago|\d+ min ago/);
    expect(await main.getByText('1 worker', { exact: true }).count()).toBe(1);
    const queue = main.getByRole('definition').filter({ hasText: /^\d+$/ });
    expect(await queue.count()).toBe(4);
    expect(await main.getByText('Jobs waiting').count()).toBe(1);
  });

  it('gives engineers and viewers no Workers entry', async () => {
    for (const account of [engineer, viewer]) {
      const page = await signIn(account);
      const nav = page.getByRole('navigation', { name: 'Team' });
      await expect.poll(() => nav.getByRole('link', { name: 'Home' }).count()).toBe(1);
      expect(await nav.getByRole('link', { name: 'Workers' }).count()).toBe(0);
      await browser?.close();
      browser = undefined;
    }
  });
});
