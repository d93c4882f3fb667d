import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, signUp, testPassword, uniqueEmail, type TestApp } from '../helpers/api';
import { linkToken, mailFor, waitForMail } from '../helpers/mailbox';

let t: TestApp;
beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => {
  await t?.close();
});

const newPassword = 'a-brand-new-passphrase';

describe('password reset', () => {
  it('e-mails a one-time link that sets a new password, stops the old one and revokes old sessions', async () => {
    const s = await signUp(t.app);
    const req = await request(t.app).post('/api/auth/password-reset').send({ email: s.user.email });
    expect(req.status).toBe(202);

    const mail = await waitForMail(t.db.knex, s.user.email, { subject: /reset/i });
    const { url, token } = linkToken(mail, 'reset-password');
    expect(url).toBe(`${t.publicUrl}/reset-password/${token}`);
    const row = await t.db.knex('password_resets').where({ user_id: s.user.id }).first();
    expect(row.token_hash).not.toContain(token);
    // The link lives one hour (common practice for reset links; OWASP Forgot Password guidance).
    expect((row.expires_at.getTime() - row.created_at.getTime()) / 60_000).toBeCloseTo(60, 1);

    const done = await request(t.app).post('/api/auth/password-reset/confirm').send({ token, password: newPassword });
    expect(done.status).toBe(204);

    const reused = await request(t.app).post('/api/auth/password-reset/confirm').send({ token, password: 'yet-another-passphrase' });
    expect(reused.status).toBe(410);
    expect(reused.body.error.code).toBe('token_used');

    expect((await request(t.app).post('/api/auth/login').send({ email: s.user.email, password: testPassword })).status).toBe(401);
    expect((await request(t.app).post('/api/auth/login').send({ email: s.user.email, password: newPassword })).status).toBe(200);
    expect((await request(t.app).get('/api/me').set(bearer(s))).status).toBe(401);
    expect((await request(t.app).get('/api/me').set('Cookie', s.cookie)).status).toBe(401);
  });

  it('answers 202 for an unknown address and sends nothing', async () => {
    const email = uniqueEmail('nobody');
    const res = await request(t.app).post('/api/auth/password-reset').send({ email });
    expect(res.status).toBe(202);
    await t.composition.services.accounts.settle();
    expect(await mailFor(t.db.knex, email)).toEqual([]);
  });

  it('answers 202 the same way for a known address', async () => {
    const s = await signUp(t.app);
    const known = await request(t.app).post('/api/auth/password-reset').send({ email: s.user.email });
    const unknown = await request(t.app).post('/api/auth/password-reset').send({ email: uniqueEmail('nobody') });
    expect(known.status).toBe(unknown.status);
    expect(known.body).toEqual(unknown.body);
  });

  it('refuses an expired link with 410 token_expired and keeps the old password', async () => {
    const s = await signUp(t.app);
    await request(t.app).post('/api/auth/password-reset').send({ email: s.user.email });
    const { token } = linkToken(await waitForMail(t.db.knex, s.user.email, { subject: /reset/i }), 'reset-password');
    await t.db.knex('password_resets').where({ user_id: s.user.id }).update({ expires_at: new Date(Date.now() - 1000) });
    const res = await request(t.app).post('/api/auth/password-reset/confirm').send({ token, password: newPassword });
    expect(res.status).toBe(410);
    expect(res.body.error.code).toBe('token_expired');
    expect((await request(t.app).post('/api/auth/login').send({ email: s.user.email, password: testPassword })).status).toBe(200);
  });

  it('makes an earlier link useless once a newer one is requested', async () => {
    const s = await signUp(t.app);
    await request(t.app).post('/api/auth/password-reset').send({ email: s.user.email });
    const first = await waitForMail(t.db.knex, s.user.email, { subject: /reset/i });
    await request(t.app).post('/api/auth/password-reset').send({ email: s.user.email });
    const second = await waitForMail(t.db.knex, s.user.email, { subject: /reset/i, afterId: first.id });
    const old = await request(t.app)
      .post('/api/auth/password-reset/confirm')
      .send({ token: linkToken(first, 'reset-password').token, password: newPassword });
    expect(old.status).toBe(410);
    const fresh = await request(t.app)
      .post('/api/auth/password-reset/confirm')
      .send({ token: linkToken(second, 'reset-password').token, password: newPassword });
    expect(fresh.status).toBe(204);
  });

  it('answers an unknown token with 400 and a short password with validation details', async () => {
    const unknown = await request(t.app).post('/api/auth/password-reset/confirm').send({ token: 'B'.repeat(43), password: newPassword });
    expect(unknown.status).toBe(400);
    expect(unknown.body.error.code).toBe('bad_request');
    const short = await request(t.app).post('/api/auth/password-reset/confirm').send({ token: 'B'.repeat(43), password: 'short' });
    expect(short.status).toBe(400);
    expect(short.body.error.details).toEqual([expect.objectContaining({ path: 'password', location: 'body' })]);
  });
});
