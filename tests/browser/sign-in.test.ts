import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo accounts and team from the shared environment contract (server/seed).
const teamName = 'Bramblecove Seabed Survey (demo)';
const admin = { email: 'ada@bramblecove.test', password: 'harbour-admin-1', name: 'Ada Ferrow' };
const engineer = { email: 'tomas@bramblecove.test', name: 'Tomas Reyl' };
const viewer = { email: 'juno@bramblecove.test', password: 'harbour-viewer-1', name: 'Juno Marsh' };

describe('signing in through the browser', () => {
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

  async function signIn(session: BrowserSession, account: { email: string; password: string }) {
    const { page } = session;
    await page.getByLabel('E-mail').fill(account.email);
    await page.getByLabel('Password').fill(account.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
  }

  it('lets the admin sign in, see the team shell and its members, and sign out', async () => {
    browser = await launchBrowser();
    const { page } = browser;

    await page.goto(`${server.url}/`);
    await page.waitForURL(`${server.url}/sign-in`);
    await expect.poll(() => page.getByRole('heading', { level: 1, name: 'Sign in' }).isVisible()).toBe(true);
    await saveScreenshot(page, 'sign-in');

    await signIn(browser, admin);
    await page.waitForURL(/\/teams\/\d+$/);
    const header = page.getByRole('banner');
    const main = page.getByRole('main');
    await expect.poll(() => main.getByRole('heading', { level: 1 }).textContent()).toBe(teamName);
    expect(await header.textContent()).toContain(teamName);
    expect(await header.textContent()).toContain(admin.name);
    // The demo seed gives the team its survey tile sets, so home lists them instead of the empty-team first step.
    await expect.poll(() => main.getByText('Survey tiles · training').first().isVisible()).toBe(true);

    const nav = page.getByRole('navigation', { name: 'Team' });
    // Later studio sections join the navigation; the team section and the admin-only Outbox must be there.
    expect(await nav.getByRole('link').allTextContents()).toEqual(expect.arrayContaining(['Home', 'Members', 'Outbox']));
    expect(await nav.getByRole('link', { name: 'Home' }).getAttribute('aria-current')).toBe('page');
    expect(await page.getByRole('contentinfo').textContent()).toContain(
      'Lossy codebooks are not validated for diagnostic medical or safety-critical inspection imagery',
    );
    await saveScreenshot(page, 'admin-home');

    await nav.getByRole('link', { name: 'Members' }).click();
    await page.waitForURL(/\/teams\/\d+\/members$/);
    const table = page.getByRole('table', { name: 'Team members and their roles' });
    await expect.poll(() => table.getByRole('row').count()).toBe(4);
    const tableText = await table.textContent();
    for (const person of [admin, engineer, viewer]) {
      expect(tableText).toContain(person.name);
      expect(tableText).toContain(person.email);
    }
    await expect.poll(() => page.getByRole('form', { name: 'Invite a member' }).isVisible()).toBe(true);
    await saveScreenshot(page, 'admin-members');

    await header.getByRole('button', { name: /account menu/ }).click();
    await page.getByRole('button', { name: 'Sign out' }).click();
    await page.waitForURL(`${server.url}/sign-in`);

    // The session has really ended: the members page now sends the visitor back to sign-in.
    const membersPath = new URL(page.url()).pathname;
    await page.goto(`${server.url}${membersPath}`);
    await page.waitForURL(/\/sign-in/);
    expect(await page.context().cookies(server.url)).not.toContainEqual(expect.objectContaining({ name: 'cw_session' }));
  });

  it('shows the viewer no admin navigation and returns them to the page they asked for', async () => {
    const login = await fetch(`${server.url}/api/auth/login`, {
      method: 'POST',
      headers: { 'Content-Type': 'application/json' },
      body: JSON.stringify({ email: viewer.email, password: viewer.password }),
    });
    const { token } = (await login.json()) as { token: string };
    const me = (await (await fetch(`${server.url}/api/me`, { headers: { Authorization: `Bearer ${token}` } })).json()) as {
      teams: Array<{ id: number; name: string; role: string }>;
    };
    const team = me.teams.find((candidate) => candidate.name === teamName);
    expect(team?.role).toBe('viewer');

    browser = await launchBrowser();
    const { page } = browser;
    await page.goto(`${server.url}/teams/${team!.id}/members`);
    await page.waitForURL(/\/sign-in\?returnTo=/);
    await signIn(browser, viewer);
    await page.waitForURL(`${server.url}/teams/${team!.id}/members`);

    const nav = page.getByRole('navigation', { name: 'Team' });
    await expect.poll(() => nav.getByRole('link').allTextContents()).toEqual(expect.arrayContaining(['Home', 'Members']));
    expect(await nav.getByRole('link').allTextContents()).not.toContain('Outbox');
    const table = page.getByRole('table', { name: 'Team members and their roles' });
    await expect.poll(() => table.getByRole('row').count()).toBe(4);
    // Viewers read roles; they get no controls to change them and no invitation form.
    expect(await table.getByRole('combobox').count()).toBe(0);
    expect(await page.getByRole('button', { name: /^Remove/ }).count()).toBe(0);
    expect(await page.getByRole('form', { name: 'Invite a member' }).count()).toBe(0);
    await saveScreenshot(page, 'viewer-members');

    await page.goto(`${server.url}/teams/${team!.id}/outbox`);
    await expect.poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Not available to your role');
    await saveScreenshot(page, 'viewer-outbox-refused');
  });

  it('sends a member whose session ends mid-page to sign-in, then back to that page', async () => {
    browser = await launchBrowser();
    const { page, context } = browser;
    await page.goto(`${server.url}/sign-in`);
    await signIn(browser, admin);
    await page.waitForURL(/\/teams\/\d+$/);
    await page.getByRole('navigation', { name: 'Team' }).getByRole('link', { name: 'Outbox' }).click();
    await page.waitForURL(/\/outbox$/);
    const outboxPath = new URL(page.url()).pathname;
    await expect.poll(() => page.getByRole('region', { name: 'Team mail' }).isVisible()).toBe(true);

    // The cookie disappears as it would on expiry; the next query answers 401.
    await context.clearCookies();
    await page.getByRole('button', { name: 'Refresh' }).click();
    await page.waitForURL(`${server.url}/sign-in?returnTo=${encodeURIComponent(outboxPath)}`);
    await expect.poll(() => page.getByText('Your session has ended').isVisible()).toBe(true);

    await signIn(browser, admin);
    await page.waitForURL(`${server.url}${outboxPath}`);
    await expect.poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe('Outbox');
  });
});
