// Server-side sessions: signing out ends a token everywhere it was copied, a password change ends every other
// session of the account, and the session cookie is Secure behind a TLS proxy named by TRUST_PROXY.
import jwt from 'jsonwebtoken';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, sessionCookieOf, signUp, testPassword, type TestApp } from '../helpers/api';
import { linkToken, waitForMail } from '../helpers/mailbox';

let t: TestApp;
beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => {
  await t?.close();
});

const login = (email: string, password = testPassword) => request(t.app).post('/api/auth/login').send({ email, password });
const me = (token: string) => request(t.app).get('/api/me').set(bearer({ token }));
const newPassword = 'a-brand-new-passphrase';

describe('signing out', () => {
  it('revokes a Bearer token on the server, so a copy of it no longer works', async () => {
    const s = await signUp(t.app);
    const script = (await login(s.user.email)).body.token as string;
    expect((await me(script)).status).toBe(200);
    const out = await request(t.app).post('/api/auth/logout').set(bearer({ token: script }));
    expect(out.status).toBe(204);
    expect((await me(script)).status).toBe(401);
    // Only that session ended: the sign-up session of the same account is still live.
    expect((await me(s.token)).status).toBe(200);
    const { jti } = jwt.decode(script) as { jti: string };
    expect((await t.db.knex('sessions').where({ id: jti }).first()).revoked_at).toBeInstanceOf(Date);
  });

  it('revokes the cookie session too, not only the cookie in this browser', async () => {
    const s = await signUp(t.app);
    const out = await request(t.app).post('/api/auth/logout').set('Cookie', s.cookie);
    expect(out.status).toBe(204);
    expect((await request(t.app).get('/api/me').set('Cookie', s.cookie)).status).toBe(401);
    expect((await me(s.token)).status).toBe(401);
  });

  it('answers 204 without a session, or with a dead one, and changes nothing', async () => {
    expect((await request(t.app).post('/api/auth/logout')).status).toBe(204);
    expect((await request(t.app).post('/api/auth/logout').set('Authorization', 'Bearer not-a-token')).status).toBe(204);
  });
});

describe('changing the password', () => {
  it('needs the current password, ends every other session, keeps this one, and records it', async () => {
    const s = await signUp(t.app);
    const laptop = (await login(s.user.email)).body.token as string;
    const script = (await login(s.user.email)).body.token as string;

    const change = await request(t.app).post('/api/me/password').set(bearer({ token: laptop })).send({ currentPassword: testPassword, newPassword });
    expect(change.status).toBe(204);
    expect((await me(laptop)).status).toBe(200);
    expect((await me(script)).status).toBe(401);
    expect((await me(s.token)).status).toBe(401);
    expect((await login(s.user.email)).status).toBe(401);
    expect((await login(s.user.email, newPassword)).status).toBe(200);
    const audit = await t.db.knex('audit_log').where({ actor_user_id: s.user.id, action: 'password.changed' });
    expect(audit).toHaveLength(1);
  });

  it('refuses a wrong current password with 400 on that field and changes nothing', async () => {
    const s = await signUp(t.app);
    const other = (await login(s.user.email)).body.token as string;
    const hashBefore = (await t.db.knex('users').where({ id: s.user.id }).first()).password_hash;
    const res = await request(t.app).post('/api/me/password').set(bearer(s)).send({ currentPassword: 'not-my-password', newPassword });
    expect(res.status).toBe(400);
    expect(res.body.error.details).toEqual([expect.objectContaining({ path: 'currentPassword' })]);
    expect((await t.db.knex('users').where({ id: s.user.id }).first()).password_hash).toBe(hashBefore);
    expect((await me(other)).status).toBe(200);
    expect(await t.db.knex('audit_log').where({ actor_user_id: s.user.id, action: 'password.changed' })).toHaveLength(0);
  });

  it('refuses a new password equal to the current one, and one over 72 bytes', async () => {
    const s = await signUp(t.app);
    const same = await request(t.app).post('/api/me/password').set(bearer(s)).send({ currentPassword: testPassword, newPassword: testPassword });
    expect(same.status).toBe(400);
    expect(same.body.error.details).toEqual([expect.objectContaining({ path: 'newPassword' })]);
    const long = await request(t.app).post('/api/me/password').set(bearer(s)).send({ currentPassword: testPassword, newPassword: 'é'.repeat(37) });
    expect(long.status).toBe(400);
    expect(long.body.error.details).toEqual([expect.objectContaining({ path: 'newPassword', message: expect.stringMatching(/72 bytes/) })]);
  });

  it('answers 401 without a session', async () => {
    const res = await request(t.app).post('/api/me/password').send({ currentPassword: testPassword, newPassword });
    expect(res.status).toBe(401);
  });

  it('spends a reset link asked for before the change', async () => {
    const s = await signUp(t.app);
    await request(t.app).post('/api/auth/password-reset').send({ email: s.user.email });
    await t.composition.services.accounts.settle();
    const { token } = linkToken(await waitForMail(t.db.knex, s.user.email, { subject: /reset/i }), 'reset-password');
    expect((await request(t.app).post('/api/me/password').set(bearer(s)).send({ currentPassword: testPassword, newPassword })).status).toBe(204);
    const late = await request(t.app).post('/api/auth/password-reset/confirm').send({ token, password: 'someone-elses-choice' });
    expect(late.status).toBe(410);
  });
});

describe('a password reset', () => {
  it('ends every session of the account', async () => {
    const s = await signUp(t.app);
    const other = (await login(s.user.email)).body.token as string;
    await request(t.app).post('/api/auth/password-reset').send({ email: s.user.email });
    await t.composition.services.accounts.settle();
    const { token } = linkToken(await waitForMail(t.db.knex, s.user.email, { subject: /reset/i }), 'reset-password');
    expect((await request(t.app).post('/api/auth/password-reset/confirm').send({ token, password: newPassword })).status).toBe(204);
    expect((await me(s.token)).status).toBe(401);
    expect((await me(other)).status).toBe(401);
    const live = await t.db.knex('sessions').where({ user_id: s.user.id }).whereNull('revoked_at');
    expect(live).toEqual([]);
  });
});

describe('behind a TLS proxy (TRUST_PROXY)', () => {
  let proxied: TestApp;
  beforeAll(async () => {
    proxied = await createTestApp({ TRUST_PROXY: 'loopback' });
  });
  afterAll(async () => {
    await proxied?.close();
  });

  it('sets the session cookie Secure, HttpOnly and SameSite=Strict when the proxy says the request came over https', async () => {
    const s = await signUp(proxied.app);
    const res = await request(proxied.app).post('/api/auth/login').set('X-Forwarded-Proto', 'https').send({ email: s.user.email, password: testPassword });
    expect(res.status).toBe(200);
    const cookie = (res.headers['set-cookie'] as unknown as string[]).find((c) => c.startsWith('cw_session='))!;
    // RFC 6265 §4.1.2.5 (Secure), §4.1.2.6 (HttpOnly); SameSite from RFC 6265bis.
    expect(cookie).toMatch(/;\s*Secure/i);
    expect(cookie).toMatch(/;\s*HttpOnly/i);
    expect(cookie).toMatch(/;\s*SameSite=Strict/i);
    expect((await request(proxied.app).get('/api/me').set('Cookie', sessionCookieOf(res))).status).toBe(200);
  });

  it('leaves the cookie without Secure when the proxy says plain http', async () => {
    const s = await signUp(proxied.app);
    const res = await request(proxied.app).post('/api/auth/login').set('X-Forwarded-Proto', 'http').send({ email: s.user.email, password: testPassword });
    const cookie = (res.headers['set-cookie'] as unknown as string[]).find((c) => c.startsWith('cw_session='))!;
    expect(cookie).not.toMatch(/;\s*Secure/i);
  });
});
