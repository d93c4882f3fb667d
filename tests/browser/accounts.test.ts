// Accounts through the browser: signing up by the mailed link, changing the password from the account menu,
// and an existing account accepting an invitation (sign in first, come back to the invitation, accept).
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { linkToken, waitForMail } from '../helpers/mailbox';
import { startServer, type StartedServer } from '../helpers/server';
import { launchBrowser, saveScreenshot, type BrowserSession } from './browser';

// Demo admin and team from the shared environment contract (server/seed); the newcomer is invented here.
const demoAdmin = { email: 'ada@bramblecove.test', password: 'harbour-admin-1' };
const demoTeam = 'Bramblecove Seabed Survey (demo)';
const newcomer = { email: 'oriel.vance@driftline.test', name: 'Oriel Vance', password: 'driftline-buoy-42', newPassword: 'driftline-mooring-77', team: 'Driftline Buoys' };

describe('accounts through the browser', () => {
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

  const api = async (path: string, body: unknown, token?: string) => {
    const res = await fetch(`${server.url}${path}`, {
      method: 'POST',
      headers: { 'Content-Type': 'application/json', ...(token ? { Authorization: `Bearer ${token}` } : {}) },
      body: JSON.stringify(body),
    });
    return { status: res.status, body: (await res.json().catch(() => null)) as Record<string, unknown> | null };
  };
  const meStatus = async (token: string) => (await fetch(`${server.url}/api/me`, { headers: { Authorization: `Bearer ${token}` } })).status;

  it('signs up by the mailed link, then changes the password from the account menu, ending the other sessions', async () => {
    browser = await launchBrowser();
    const { page } = browser;

    await page.goto(`${server.url}/sign-in`);
    await page.getByRole('link', { name: 'Create a team' }).click();
    await page.waitForURL(/\/sign-up$/);
    const ask = page.getByRole('form', { name: 'Create a team' });
    await ask.getByLabel('Work e-mail').fill(newcomer.email);
    await ask.getByRole('button', { name: 'Send sign-up link' }).click();
    await expect.poll(() => page.getByRole('status').textContent()).toContain('Check your inbox');
    await saveScreenshot(page, 'sign-up-check-inbox');

    const mail = await waitForMail(server.db.knex, newcomer.email, { subject: /finish creating/i });
    const { url } = linkToken(mail, 'sign-up');
    await page.goto(url);
    await expect.poll(() => page.getByRole('main').textContent()).toContain(`You sign in with ${newcomer.email}`);
    const finish = page.getByRole('form', { name: 'Finish creating your account' });
    await finish.getByLabel('Your name').fill(newcomer.name);
    // "€" is three bytes in UTF-8: 25 of them are 75 bytes, over bcrypt's 72 though only 25 characters.
    await finish.getByLabel('Password', { exact: true }).fill('€'.repeat(25));
    await finish.getByLabel('Repeat password').fill('€'.repeat(25));
    await finish.getByLabel('Team name').fill(newcomer.team);
    await finish.getByRole('button', { name: 'Create team' }).click();
    await expect.poll(() => finish.getByText(/at most 72 bytes/).isVisible()).toBe(true);
    await finish.getByLabel('Password', { exact: true }).fill(newcomer.password);
    await finish.getByLabel('Repeat password').fill(newcomer.password);
    await saveScreenshot(page, 'sign-up-finish');
    await finish.getByRole('button', { name: 'Create team' }).click();
    await page.waitForURL(/\/teams\/\d+$/);
    const teamPath = new URL(page.url()).pathname;
    await expect.poll(() => page.getByRole('main').getByRole('heading', { level: 1 }).textContent()).toBe(newcomer.team);

    // The link was single-use.
    const again = await browser.context.newPage();
    await again.goto(url);
    await expect.poll(() => again.getByRole('alert').textContent()).toContain('This sign-up link is no longer valid');
    await again.close();

    // Another session of the same account, as a script would hold it.
    const script = (await api('/api/auth/login', { email: newcomer.email, password: newcomer.password })).body!.token as string;
    expect(await meStatus(script)).toBe(200);

    await page.getByRole('banner').getByRole('button', { name: /account menu/ }).click();
    await page.getByRole('link', { name: 'Change password' }).click();
    await page.waitForURL(/\/account\/password$/);
    const form = page.getByRole('form', { name: 'Change your password' });
    await form.getByLabel('Current password').fill('not-the-password-1');
    await form.getByLabel('New password', { exact: true }).fill(newcomer.newPassword);
    await form.getByLabel('Repeat new password').fill(newcomer.newPassword);
    await form.getByRole('button', { name: 'Change password' }).click();
    await expect.poll(() => form.getByRole('alert').textContent()).toContain('The current password is not correct');
    await form.getByLabel('Current password').fill(newcomer.password);
    await form.getByLabel('New password', { exact: true }).fill(newcomer.newPassword);
    await form.getByLabel('Repeat new password').fill(newcomer.newPassword);
    await form.getByRole('button', { name: 'Change password' }).click();
    await expect.poll(() => form.getByRole('status').textContent()).toContain('Password changed');
    await saveScreenshot(page, 'password-change');

    // The script's session ended; this browser's did not.
    expect(await meStatus(script)).toBe(401);
    await page.goto(`${server.url}${teamPath}`);
    await expect.poll(() => page.getByRole('main').getByRole('heading', { level: 1 }).textContent()).toBe(newcomer.team);
    expect((await api('/api/auth/login', { email: newcomer.email, password: newcomer.password })).status).toBe(401);
    expect((await api('/api/auth/login', { email: newcomer.email, password: newcomer.newPassword })).status).toBe(200);
  });

  it('has an existing account sign in first, then brings it back to the invitation to accept', async () => {
    const invitee = { email: 'pell.harrow@driftline.test', password: 'harrow-tide-gauge-3' };
    // The invitee already has an account (made through the mailed sign-up link).
    await api('/api/auth/signup', { email: invitee.email });
    const signupMail = await waitForMail(server.db.knex, invitee.email, { subject: /finish creating/i });
    expect((await api('/api/auth/signup/complete', { token: linkToken(signupMail, 'sign-up').token, name: 'Pell Harrow', password: invitee.password, teamName: 'Harrow Lab' })).status).toBe(201);
    const adminToken = (await api('/api/auth/login', demoAdmin)).body!.token as string;
    const teams = (await (await fetch(`${server.url}/api/me`, { headers: { Authorization: `Bearer ${adminToken}` } })).json()) as { teams: { id: number; name: string }[] };
    const teamId = teams.teams.find((t) => t.name === demoTeam)!.id;
    expect((await api(`/api/teams/${teamId}/invitations`, { email: invitee.email, role: 'engineer' }, adminToken)).status).toBe(201);
    const invitation = linkToken(await waitForMail(server.db.knex, invitee.email, { subject: /invited/i }), 'invite');

    browser = await launchBrowser();
    const { page } = browser;
    await page.goto(invitation.url);
    await expect.poll(() => page.getByRole('heading', { level: 1 }).textContent()).toBe(`Join ${demoTeam}`);
    await page.getByRole('link', { name: 'Sign in to accept' }).click();
    await page.waitForURL(/\/sign-in\?returnTo=/);
    // The invited address is filled in.
    expect(await page.getByLabel('E-mail').inputValue()).toBe(invitee.email);
    await page.getByLabel('Password').fill(invitee.password);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(invitation.url);
    await saveScreenshot(page, 'invitation-signed-in');
    await page.getByRole('button', { name: 'Accept and join team' }).click();
    await page.waitForURL(`${server.url}/teams/${teamId}`);
    await expect.poll(() => page.getByRole('main').getByRole('heading', { level: 1 }).textContent()).toBe(demoTeam);
    await expect.poll(() => page.getByRole('main').textContent()).toContain('Engineer');
  });
});
