import jwt from 'jsonwebtoken';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { errorBody, signupLinkPreview, signupResponse } from '../../server/contracts';
import { bearer, createTestApp, sessionCookieOf, signUp, testPassword, uniqueEmail, type TestApp } from '../helpers/api';
import { linkToken, waitForMail } from '../helpers/mailbox';

let t: TestApp;
beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => {
  await t?.close();
});

const rawSetCookie = (res: request.Response): string => {
  const h = res.headers['set-cookie'] as unknown as string[] | undefined;
  return (h ?? []).find((c) => c.startsWith('cw_session=')) ?? '';
};

async function askToSignUp(email: string) {
  const res = await request(t.app).post('/api/auth/signup').send({ email });
  await t.composition.services.accounts.settle();
  return res;
}

describe('sign-up', () => {
  it('answers 202 the same way whether or not the address has an account, and mails each owner what fits', async () => {
    const existing = await signUp(t.app, { name: 'Mira Ostlund' });
    const fresh = uniqueEmail('fresh');
    const known = await askToSignUp(existing.user.email.toUpperCase());
    const unknown = await askToSignUp(fresh);
    expect(known.status).toBe(202);
    expect(unknown.status).toBe(202);
    expect(known.body).toEqual({ status: 'accepted' });
    expect(unknown.body).toEqual(known.body);
    expect(known.headers['set-cookie']).toBeUndefined();

    const link = await waitForMail(t.db.knex, fresh, { subject: /finish creating/i });
    expect(linkToken(link, 'sign-up').url).toMatch(new RegExp(`^${t.publicUrl}/sign-up/[A-Za-z0-9_-]{43}$`));
    const note = await waitForMail(t.db.knex, existing.user.email, { subject: /already have/i });
    // The owner is told how to sign in or reset; the note carries no link that makes or changes anything.
    expect(note.text).toContain(`${t.publicUrl}/sign-in`);
    expect(note.text).toContain(`${t.publicUrl}/forgot-password`);
    expect(note.text).not.toMatch(/\/(sign-up|reset-password|invite)\//);
    // No second account, no team for the stranger.
    expect(await t.db.knex('users').where({ email: existing.user.email })).toHaveLength(1);
  });

  it('creates the user, a team and an admin membership from the mailed link, and answers 201 with a session', async () => {
    const email = uniqueEmail('founder');
    await askToSignUp(`  ${email.toUpperCase()} `);
    const { token } = linkToken(await waitForMail(t.db.knex, email, { subject: /finish creating/i }), 'sign-up');
    const preview = await request(t.app).get(`/api/auth/signup/${token}`);
    expect(preview.status).toBe(200);
    expect(signupLinkPreview.parse(preview.body).email).toBe(email);

    const res = await request(t.app).post('/api/auth/signup/complete').send({ token, password: testPassword, name: 'Mira Ostlund', teamName: 'Kelp Imaging' });
    expect(res.status).toBe(201);
    expect(signupResponse.parse(res.body)).toBeTruthy();
    expect(res.body.user.email).toBe(email);
    expect(res.body.team).toEqual({ id: expect.any(Number), name: 'Kelp Imaging', role: 'admin' });
    const membership = await t.db.knex('memberships').where({ user_id: res.body.user.id, team_id: res.body.team.id }).first();
    expect(membership.role).toBe('admin');
    const audit = await t.db.knex('audit_log').where({ actor_user_id: res.body.user.id }).select('action');
    expect(audit.map((a: { action: string }) => a.action).sort()).toEqual(['team.created', 'user.signed_up']);
    expect(rawSetCookie(res)).toMatch(/^cw_session=/);
    const me = await request(t.app).get('/api/me').set('Cookie', sessionCookieOf(res));
    expect(me.body.user.email).toBe(email);
    // The link stored as its SHA-256 only, and spent.
    const stored = await t.db.knex('signup_links').where({ email }).first();
    expect(stored.token_hash).toMatch(/^[0-9a-f]{64}$/);
    expect(JSON.stringify(stored)).not.toContain(token);

    const again = await request(t.app).post('/api/auth/signup/complete').send({ token, password: testPassword, name: 'Again', teamName: 'Again' });
    expect(again.status).toBe(410);
    expect(again.body.error.code).toBe('token_used');
    expect((await request(t.app).get(`/api/auth/signup/${token}`)).status).toBe(410);
  });

  it('refuses an expired link with 410 and an unknown one with 400, creating nothing', async () => {
    const email = uniqueEmail('late');
    await askToSignUp(email);
    const { token } = linkToken(await waitForMail(t.db.knex, email, { subject: /finish creating/i }), 'sign-up');
    await t.db.knex('signup_links').where({ email }).update({ expires_at: new Date(Date.now() - 1000) });
    const teamsBefore = await t.db.knex('teams').count({ n: '*' }).first();
    const expired = await request(t.app).post('/api/auth/signup/complete').send({ token, password: testPassword, name: 'L', teamName: 'L' });
    expect(expired.status).toBe(410);
    expect(expired.body.error.code).toBe('token_expired');
    const unknown = await request(t.app).post('/api/auth/signup/complete').send({ token: 'C'.repeat(43), password: testPassword, name: 'U', teamName: 'U' });
    expect(unknown.status).toBe(400);
    expect(unknown.body.error.code).toBe('bad_request');
    expect(await t.db.knex('users').where({ email }).first()).toBeUndefined();
    expect(await t.db.knex('teams').count({ n: '*' }).first()).toEqual(teamsBefore);
  });

  it('keeps only the newest link of an address alive', async () => {
    const email = uniqueEmail('twice');
    await askToSignUp(email);
    const first = await waitForMail(t.db.knex, email, { subject: /finish creating/i });
    await askToSignUp(email);
    const second = await waitForMail(t.db.knex, email, { subject: /finish creating/i, afterId: first.id });
    expect((await request(t.app).get(`/api/auth/signup/${linkToken(first, 'sign-up').token}`)).status).toBe(410);
    expect((await request(t.app).get(`/api/auth/signup/${linkToken(second, 'sign-up').token}`)).status).toBe(200);
  });

  it('answers an invalid body with 400 validation_failed naming each bad field', async () => {
    const ask = await request(t.app).post('/api/auth/signup').send({ email: 'not-an-address' });
    expect(ask.status).toBe(400);
    expect(errorBody.parse(ask.body).error.code).toBe('validation_failed');
    const res = await request(t.app).post('/api/auth/signup/complete').send({ token: 'D'.repeat(43), password: 'short', name: '', teamName: 'T' });
    expect(res.status).toBe(400);
    const paths = (res.body.error.details as { path: string }[]).map((d) => d.path).sort();
    expect(paths).toEqual(['name', 'password']);
  });

  it('rejects a body with an unknown field instead of ignoring it', async () => {
    const res = await request(t.app).post('/api/auth/signup').send({ email: uniqueEmail(), password: testPassword });
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('validation_failed');
    expect(res.body.error.details).toEqual([{ path: 'password', message: 'Unknown field', location: 'body' }]);
  });
});

describe('password length', () => {
  // bcrypt reads 72 bytes and ignores the rest, so the limit is in UTF-8 bytes, not characters.
  // "€" (U+20AC) is three bytes in UTF-8 (RFC 3629 §3): 24 of them are 72 bytes, 25 are 75 bytes in 25 characters.
  const bytes72 = '€'.repeat(24);
  const bytes75 = '€'.repeat(25);

  it('refuses a password over 72 UTF-8 bytes with a message naming bytes, even when it has fewer than 72 characters', async () => {
    for (const [path, body] of [
      ['/api/auth/password-reset/confirm', { token: 'E'.repeat(43), password: bytes75 }],
      ['/api/auth/signup/complete', { token: 'E'.repeat(43), password: bytes75, name: 'N', teamName: 'T' }],
    ] as const) {
      const res = await request(t.app).post(path).send(body);
      expect(res.status, path).toBe(400);
      expect(res.body.error.code).toBe('validation_failed');
      expect(res.body.error.details).toEqual([expect.objectContaining({ path: 'password', message: expect.stringMatching(/72 bytes/) })]);
    }
  });

  it('accepts a password of exactly 72 bytes, and it signs in', async () => {
    const s = await signUp(t.app, { password: bytes72 });
    const res = await request(t.app).post('/api/auth/login').send({ email: s.user.email, password: bytes72 });
    expect(res.status).toBe(200);
  });
});

describe('sign-in', () => {
  it('answers a wrong password and an unknown e-mail with the same 401 and message', async () => {
    const s = await signUp(t.app);
    const wrong = await request(t.app).post('/api/auth/login').send({ email: s.user.email, password: 'not-the-password' });
    const unknown = await request(t.app).post('/api/auth/login').send({ email: uniqueEmail('ghost'), password: 'not-the-password' });
    expect(wrong.status).toBe(401);
    expect(unknown.status).toBe(401);
    expect(wrong.body).toEqual(unknown.body);
    expect(wrong.body.error.code).toBe('unauthenticated');
    expect(wrong.headers['set-cookie']).toBeUndefined();
  });

  it('never includes a password hash in any auth response', async () => {
    const email = uniqueEmail('nohash');
    await askToSignUp(email);
    const { token } = linkToken(await waitForMail(t.db.knex, email, { subject: /finish creating/i }), 'sign-up');
    const signup = await request(t.app).post('/api/auth/signup/complete').send({ token, password: testPassword, name: 'N', teamName: 'T' });
    const login = await request(t.app).post('/api/auth/login').send({ email, password: testPassword });
    const me = await request(t.app).get('/api/me').set(bearer(login.body));
    const stored = (await t.db.knex('users').where({ email }).first()).password_hash as string;
    expect(stored).toMatch(/^\$2[aby]\$10\$/);
    for (const res of [signup, login, me]) {
      const text = JSON.stringify(res.body);
      expect(text).not.toContain(stored);
      expect(text).not.toMatch(/password/i);
    }
  });

  it('sets the session cookie HttpOnly, SameSite=Strict, Path=/ and not Secure over plain HTTP', async () => {
    const s = await signUp(t.app);
    const res = await request(t.app).post('/api/auth/login').send({ email: s.user.email, password: testPassword });
    expect(res.status).toBe(200);
    const cookie = rawSetCookie(res);
    // RFC 6265 §5.2: attribute names are case-insensitive.
    expect(cookie).toMatch(/;\s*HttpOnly/i);
    expect(cookie).toMatch(/;\s*SameSite=Strict/i);
    expect(cookie).toMatch(/;\s*Path=\/(;|$)/i);
    expect(cookie).not.toMatch(/;\s*Secure/i);
    expect(cookie.split(';')[0].slice('cw_session='.length)).toBe(res.body.token);
  });

  it('ignores X-Forwarded-Proto while TRUST_PROXY is off: no Secure flag a client could ask for', async () => {
    const s = await signUp(t.app);
    const res = await request(t.app).post('/api/auth/login').set('X-Forwarded-Proto', 'https').send({ email: s.user.email, password: testPassword });
    expect(res.status).toBe(200);
    expect(rawSetCookie(res)).not.toMatch(/;\s*Secure/i);
  });

  it('accepts the session both as the cookie and as a Bearer token', async () => {
    const s = await signUp(t.app);
    const viaCookie = await request(t.app).get('/api/me').set('Cookie', s.cookie);
    const viaBearer = await request(t.app).get('/api/me').set(bearer(s));
    expect(viaCookie.status).toBe(200);
    expect(viaBearer.status).toBe(200);
    expect(viaCookie.body).toEqual(viaBearer.body);
    expect(viaCookie.body.teams).toEqual([{ id: s.teamId, name: 'Test Team', role: 'admin' }]);
  });

  it('answers /api/me without a session with 401 in the error shape', async () => {
    const res = await request(t.app).get('/api/me');
    expect(res.status).toBe(401);
    expect(errorBody.parse(res.body).error.code).toBe('unauthenticated');
  });

  it('clears the cookie on logout', async () => {
    const s = await signUp(t.app);
    const res = await request(t.app).post('/api/auth/logout').set('Cookie', s.cookie);
    expect(res.status).toBe(204);
    const cleared = rawSetCookie(res);
    // RFC 6265 §3.1: a cookie is removed by setting it again with an expiry in the past.
    expect(cleared).toMatch(/^cw_session=;/);
    expect(cleared).toMatch(/Expires=Thu, 01 Jan 1970/i);
    expect(cleared).toMatch(/;\s*Path=\//i);
  });

  it('refuses an expired token with 401, even when its session row is still live', async () => {
    const s = await signUp(t.app);
    const { jti } = jwt.decode(s.token) as { jti: string };
    const past = Math.floor(Date.now() / 1000) - 3600;
    // RFC 7519 §4.1.4: a token must not be accepted on or after its "exp" time.
    const expired = jwt.sign({ sub: String(s.user.id), jti, iat: past - 60, exp: past }, t.composition.config.jwt.secret, {
      algorithm: 'HS256',
      issuer: 'cellwright',
    });
    const res = await request(t.app).get('/api/me').set('Authorization', `Bearer ${expired}`);
    expect(res.status).toBe(401);
    expect((await request(t.app).get('/api/me').set(bearer(s))).status).toBe(200);
  });

  it('refuses a token whose session has expired on the server, though the token itself has not', async () => {
    const s = await signUp(t.app);
    const { jti } = jwt.decode(s.token) as { jti: string };
    await t.db.knex('sessions').where({ id: jti }).update({ expires_at: new Date(Date.now() - 1000) });
    expect((await request(t.app).get('/api/me').set(bearer(s))).status).toBe(401);
  });

  it('refuses a token signed with another key, and an unsigned one, with 401', async () => {
    const s = await signUp(t.app);
    const { jti } = jwt.decode(s.token) as { jti: string };
    const forged = jwt.sign({ sub: String(s.user.id), jti }, 'a-different-secret-of-enough-length-1234', {
      algorithm: 'HS256',
      issuer: 'cellwright',
      expiresIn: 600,
    });
    // RFC 7519 §6: an unsecured JWT ("alg":"none") carries no signature and must not authenticate anyone.
    const unsigned = `${Buffer.from('{"alg":"none","typ":"JWT"}').toString('base64url')}.${Buffer.from(
      JSON.stringify({ sub: String(s.user.id), jti, iss: 'cellwright', exp: Math.floor(Date.now() / 1000) + 600 }),
    ).toString('base64url')}.`;
    for (const token of [forged, unsigned]) {
      const res = await request(t.app).get('/api/me').set('Authorization', `Bearer ${token}`);
      expect(res.status).toBe(401);
    }
    const cookieForged = await request(t.app).get('/api/me').set('Cookie', `cw_session=${forged}`);
    expect(cookieForged.status).toBe(401);
  });

  it('refuses the token of a user who no longer exists with 401', async () => {
    const s = await signUp(t.app);
    expect((await request(t.app).get('/api/me').set(bearer(s))).status).toBe(200);
    await t.db.knex('users').where({ id: s.user.id }).delete();
    const res = await request(t.app).get('/api/me').set(bearer(s));
    expect(res.status).toBe(401);
  });
});
