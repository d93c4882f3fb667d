import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo accounts and team from the shared environment contract (server/seed).
const teamName = 'Bramblecove Seabed Survey (demo)';
const admin = { email: 'ada@bramblecove.test', password: 'harbour-admin-1' };
const invitee = { email: 'rhea.calder@bramblecove.test', name: 'Rhea Calder', password: 'kelp-forest-survey-9' };

describe('inviting a member through the browser', () => {
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

  it('sends an invitation the admin can follow from the outbox to a new account in the team', async () => {
    browser = await launchBrowser();
    const { page } = browser;

    await page.goto(`${server.url}/sign-in`);
    await page.getByLabel('E-mail').fill(admin.email);
    await page.getByLabel('Password').fill(admin.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(/\/teams\/\d+$/);
    const teamPath = new URL(page.url()).pathname;

    await page.getByRole('navigation', { name: 'Team' }).getByRole('link', { name: 'Members' }).click();
    const inviteForm = page.getByRole('form', { name: 'Invite a member' });
    await inviteForm.getByLabel('E-mail').fill(invitee.email);
    await inviteForm.getByLabel('Role').selectOption('viewer');
    await inviteForm.getByRole('button', { name: 'Send invitation' }).click();
    await expect.poll(() => inviteForm.getByRole('status').textContent()).toContain(`Invitation sent to ${invitee.email}`);
    const pending = page.getByRole('region', { name: 'Pending invitations' });
    await expect.poll(() => pending.textContent()).toContain(invitee.email);

    // A role change waits for confirmation in a dialog, then the table shows the new role.
    await page.getByLabel('Role of Tomas Reyl').selectOption('viewer');
    const dialog = page.getByRole('dialog', { name: 'Change role?' });
    expect(await dialog.textContent()).toContain('Tomas Reyl changes from Engineer to Viewer');
    await dialog.getByRole('button', { name: 'Change role' }).click();
    await expect.poll(() => dialog.isVisible()).toBe(false);
    await expect.poll(() => page.getByLabel('Role of Tomas Reyl').inputValue()).toBe('viewer');
    await saveScreenshot(page, 'admin-members-after-invite');

    await page.getByRole('navigation', { name: 'Team' }).getByRole('link', { name: 'Outbox' }).click();
    await page.waitForURL(/\/outbox$/);
    const messages = page.getByRole('region', { name: 'Team mail' });
    // The capture server stores the message as it arrives; refresh until it is listed.
    await expect
      .poll(async () => {
        if (await messages.getByText(invitee.email).first().isVisible()) return true;
        await page.getByRole('button', { name: 'Refresh' }).click();
        return false;
      })
      .toBe(true);
    await messages.locator('summary').filter({ hasText: invitee.email }).click();
    const link = messages.getByRole('link', { name: /\/invite\// });
    const invitationUrl = await link.getAttribute('href');
    expect(invitationUrl).toMatch(new RegExp(`^${server.url}/invite/[A-Za-z0-9_-]{20,}$`));
    await saveScreenshot(page, 'admin-outbox');

    await page.getByRole('banner').getByRole('button', { name: /account menu/ }).click();
    await page.getByRole('button', { name: 'Sign out' }).click();
    await page.waitForURL(/\/sign-in$/);

    await page.goto(invitationUrl!);
    await expect.poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe(`Join ${teamName}`);
    const form = page.getByRole('form', { name: 'Create your account' });
    await form.getByLabel('Your name').fill(invitee.name);
    await form.getByLabel('Password', { exact: true }).fill(invitee.password);
    await form.getByLabel('Repeat password').fill('a-different-password');
    await form.getByRole('button', { name: 'Create account and join' }).click();
    await expect.poll(() => form.getByText('The two passwords differ').isVisible()).toBe(true);
    await saveScreenshot(page, 'accept-invitation');

    await form.getByLabel('Repeat password').fill(invitee.password);
    await form.getByRole('button', { name: 'Create account and join' }).click();
    await page.waitForURL(`${server.url}${teamPath}`);
    const main = page.getByRole('main');
    await expect.poll(() => main.getByRole('heading', { level: 1 }).textContent()).toBe(teamName);
    await expect.poll(() => main.textContent()).toContain('Viewer');
    await expect.poll(() => page.getByRole('banner').textContent()).toContain(invitee.name);

    // The token was single-use: following the link again shows it is spent.
    await page.goto(invitationUrl!);
    await expect.poll(() => page.getByRole('alert').textContent()).toContain('This invitation is no longer valid');

    // Both bundled faces were fetched from this server (no CDN) and are in use.
    await page.goto(`${server.url}${teamPath}/members`);
    await expect.poll(() => page.getByRole('table', { name: 'Team members and their roles' }).getByRole('row').count()).toBe(5);
    const loaded = await page.evaluate(async () => {
      await document.fonts.ready;
      return [...document.fonts].filter((face) => face.status === 'loaded').map((face) => `${face.family.replaceAll('"', '')} ${face.weight}`);
    });
    expect(loaded).toEqual(expect.arrayContaining(['IBM Plex Sans 400', 'IBM Plex Sans 600', 'JetBrains Mono 400']));
  });
});
