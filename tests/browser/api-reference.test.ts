import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// A demo account from the seed (server/seed/demo.ts): the page is for every member, so the viewer is enough.
const viewer = { email: 'juno@bramblecove.test', password: 'harbour-viewer-1' };

describe('the API page', () => {
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

  it('lists every route of the served description by tag and opens one onto its body and responses', async () => {
    browser = await launchBrowser();
    const { page } = browser;
    await page.goto(`${server.url}/sign-in`);
    await page.getByLabel('E-mail').fill(viewer.email);
    await page.getByLabel('Password').fill(viewer.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(/\/teams\/\d+/);

    await page.getByRole('navigation', { name: 'Team' }).getByRole('link', { name: 'API' }).click();
    await page.waitForURL(/\/teams\/\d+\/api$/);
    const main = page.getByRole('main');
    await expect.poll(() => main.getByRole('heading', { level: 1 }).textContent()).toBe('API');

    const doc = (await (await page.request.get(`${server.url}/api/openapi.json`)).json()) as { paths: Record<string, object>; tags: { name: string }[] };
    const operations = Object.values(doc.paths).reduce((n, ops) => n + Object.keys(ops).length, 0);
    await expect.poll(() => main.getByTestId('api-operation').count()).toBe(operations);
    for (const { name } of doc.tags) expect(await main.getByRole('region', { name }).count()).toBe(1);

    const runs = main.getByRole('region', { name: 'Runs' });
    const create = runs.getByTestId('api-operation').filter({ hasText: 'Start a training run' });
    await create.locator('summary').click();
    await expect.poll(() => create.getByText('Request body').isVisible()).toBe(true);
    expect(await create.locator('p', { hasText: 'Who may call it' }).textContent()).toBe('Who may call it: Engineers and admins (roles: admin, engineer)');
    expect(await create.getByText('201', { exact: true }).count()).toBe(1);
    await saveScreenshot(page, 'api-reference');

    const schemaLink = main.getByRole('link', { name: '/api/schemas/codebook.schema.json' });
    const schema = (await (await page.request.get(new URL((await schemaLink.getAttribute('href'))!, server.url).href)).json()) as { $id: string };
    expect(schema.$id).toMatch(/\/api\/schemas\/codebook\.schema\.json$/);
  });
});
