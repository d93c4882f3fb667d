import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { waitForMail } from '../helpers/mailbox';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo accounts from the shared environment contract (server/seed).
const admin = { email: 'ada@bramblecove.test', password: 'harbour-admin-1' };
const viewer = { email: 'juno@bramblecove.test', oldPassword: 'harbour-viewer-1', newPassword: 'low-tide-transect-4' };

describe('resetting a password through the browser', () => {
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

  async function signIn(email: string, password: string) {
    const { page } = browser!;
    await page.goto(`${server.url}/sign-in`);
    await page.getByLabel('E-mail').fill(email);
    await page.getByLabel('Password').fill(password);
    await page.getByRole('button', { name: 'Sign in' }).click();
  }

  it('mails a one-time link that sets a new password and retires the old one', async () => {
    browser = await launchBrowser();
    const { page } = browser;

    await page.goto(`${server.url}/sign-in`);
    await page.getByRole('link', { name: 'Forgot your password?' }).click();
    await page.waitForURL(/\/forgot-password$/);
    // The page arrives as its own chunk after the URL changes, while the sign-in form (with its own
    // E-mail field) may still be on screen: address the reset form itself.
    const requestForm = page.getByRole('form', { name: 'Request a password reset' });
    await requestForm.getByLabel('E-mail').fill(viewer.email);
    await requestForm.getByRole('button', { name: 'Send reset link' }).click();
    await expect.poll(() => page.getByRole('status').textContent()).toContain('Check your inbox');

    // The capture server keeps the e-mail for the operator (`npm run mail`); no team's Outbox shows it.
    const mail = await waitForMail(server.db.knex, viewer.email, { subject: /reset/i });
    const resetUrl = /https?:\/\/\S+\/reset-password\/[A-Za-z0-9_-]+/.exec(mail.text)?.[0];
    expect(resetUrl).toMatch(new RegExp(`^${server.url}/reset-password/[A-Za-z0-9_-]{20,}$`));

    await signIn(admin.email, admin.password);
    await page.waitForURL(/\/teams\/\d+$/);
    await page.getByRole('navigation', { name: 'Team' }).getByRole('link', { name: 'Outbox' }).click();
    const messages = page.getByRole('region', { name: 'Team mail' });
    await expect.poll(() => messages.isVisible()).toBe(true);
    expect(await messages.textContent()).not.toContain(viewer.email);
    await page.getByRole('banner').getByRole('button', { name: /account menu/ }).click();
    await page.getByRole('button', { name: 'Sign out' }).click();
    await page.waitForURL(/\/sign-in$/);

    await page.goto(resetUrl!);
    await page.getByLabel('New password', { exact: true }).fill(viewer.newPassword);
    await page.getByLabel('Repeat new password').fill(`${viewer.newPassword}x`);
    await page.getByRole('button', { name: 'Set new password' }).click();
    await expect.poll(() => page.getByText('The two passwords differ').isVisible()).toBe(true);
    await page.getByLabel('Repeat new password').fill(viewer.newPassword);
    await page.getByRole('button', { name: 'Set new password' }).click();
    await expect.poll(() => page.getByRole('status').textContent()).toContain('Password changed');
    await saveScreenshot(page, 'password-changed');

    // The link was single-use.
    await page.goto(resetUrl!);
    await page.getByLabel('New password', { exact: true }).fill('another-new-password-5');
    await page.getByLabel('Repeat new password').fill('another-new-password-5');
    await page.getByRole('button', { name: 'Set new password' }).click();
    await expect.poll(() => page.getByRole('alert').isVisible()).toBe(true);
    await expect.poll(() => page.getByRole('alert').getByRole('link', { name: 'Request a new link' }).isVisible()).toBe(true);
    await saveScreenshot(page, 'password-link-spent');

    await signIn(viewer.email, viewer.oldPassword);
    await expect.poll(() => page.getByRole('alert').isVisible()).toBe(true);
    expect(new URL(page.url()).pathname).toBe('/sign-in');

    await signIn(viewer.email, viewer.newPassword);
    await page.waitForURL(/\/teams\/\d+$/);
    await expect.poll(() => page.getByRole('banner').textContent()).toContain('Juno Marsh');
  });
});
