import jwt from 'jsonwebtoken';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { errorBody, signupResponse } from '../../server/contracts';
import { bearer, createTestApp, sessionCookieOf, signUp, testPassword, uniqueEmail, type TestApp } from '../helpers/api';

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

describe('sign-up', () => {
  it('creates the user, a team and an admin membership, and answers 201 with a session', async () => {
    const email = uniqueEmail('founder');
    const res = await request(t.app)
      .post('/api/auth/signup')
      .send({ email: `  ${email.toUpperCase()} `, password: testPassword, name: 'Mira Ostlund', teamName: 'Kelp Imaging' });
    expect(res.status).toBe(201);
    expect(signupResponse.parse(res.body)).toBeTruthy();
    expect(res.body.user.email).toBe(email);
    expect(res.body.team).toEqual({ id: expect.any(Number), name: 'Kelp Imaging', role: 'admin' });
    const membership = await t.db.knex('memberships').where({ user_id: res.body.user.id, team_id: res.body.team.id }).first();
    expect(membership.role).toBe('admin');
    const audit = await t.db.knex('audit_log').where({ actor_user_id: res.body.user.id }).select('action');
    expect(audit.map((a: { action: string }) => a.action).sort()).toEqual(['team.created', 'user.signed_up']);
    expect(rawSetCookie(res)).toMatch(/^cw_session=/);
  });

  it('refuses a second account with the same e-mail with 409 and leaves no extra team behind', async () => {
    const email = uniqueEmail('dup');
    await signUp(t.app, { email });
    const teamsBefore = await t.db.knex('teams').count({ n: '*' }).first();
    const res = await request(t.app)
      .post('/api/auth/signup')
      .send({ email: email.toUpperCase(), password: testPassword, name: 'Other', teamName: 'Other team' });
    expect(res.status).toBe(409);
    expect(res.body.error.code).toBe('conflict');
    expect(await t.db.knex('teams').count({ n: '*' }).first()).toEqual(teamsBefore);
  });

  it('answers an invalid body with 400 validation_failed naming each bad field', async () => {
    const res = await request(t.app).post('/api/auth/signup').send({ email: 'not-an-address', password: 'short', name: '', teamName: 'T' });
    expect(res.status).toBe(400);
    expect(errorBody.parse(res.body).error.code).toBe('validation_failed');
    const paths = (res.body.error.details as { path: string }[]).map((d) => d.path).sort();
    expect(paths).toEqual(['email', 'name', 'password']);
  });

  it('rejects a body with an unknown field instead of ignoring it', async () => {
    const res = await request(t.app)
      .post('/api/auth/signup')
      .send({ email: uniqueEmail(), password: testPassword, name: 'A', teamName: 'B', role: 'admin' });
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('validation_failed');
    expect(res.body.error.details).toEqual([{ path: 'role', message: 'Unknown field', location: 'body' }]);
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
    const signup = await request(t.app).post('/api/auth/signup').send({ email, password: testPassword, name: 'N', teamName: 'T' });
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

  it('marks the cookie Secure when the request arrived over TLS', async () => {
    const s = await signUp(t.app);
    t.app.set('trust proxy', 'loopback');
    try {
      const res = await request(t.app)
        .post('/api/auth/login')
        .set('X-Forwarded-Proto', 'https')
        .send({ email: s.user.email, password: testPassword });
      expect(rawSetCookie(res)).toMatch(/;\s*Secure/i);
    } finally {
      t.app.set('trust proxy', false);
    }
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

  it('refuses an expired token with 401', async () => {
    const s = await signUp(t.app);
    const past = Math.floor(Date.now() / 1000) - 3600;
    // RFC 7519 §4.1.4: a token must not be accepted on or after its "exp" time.
    const expired = jwt.sign({ sub: String(s.user.id), tv: 0, iat: past - 60, exp: past }, t.composition.config.jwt.secret, {
      algorithm: 'HS256',
      issuer: 'cellwright',
    });
    const res = await request(t.app).get('/api/me').set('Authorization', `Bearer ${expired}`);
    expect(res.status).toBe(401);
  });

  it('refuses a token signed with another key, and an unsigned one, with 401', async () => {
    const s = await signUp(t.app);
    const forged = jwt.sign({ sub: String(s.user.id), tv: 0 }, 'a-different-secret-of-enough-length-1234', {
      algorithm: 'HS256',
      issuer: 'cellwright',
      expiresIn: 600,
    });
    // RFC 7519 §6: an unsecured JWT ("alg":"none") carries no signature and must not authenticate anyone.
    const unsigned = `${Buffer.from('{"alg":"none","typ":"JWT"}').toString('base64url')}.${Buffer.from(
      JSON.stringify({ sub: String(s.user.id), tv: 0, iss: 'cellwright', exp: Math.floor(Date.now() / 1000) + 600 }),
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

  it('returns the cookie it set on sign-up as a working session', async () => {
    const email = uniqueEmail();
    const res = await request(t.app).post('/api/auth/signup').send({ email, password: testPassword, name: 'C', teamName: 'D' });
    const me = await request(t.app).get('/api/me').set('Cookie', sessionCookieOf(res));
    expect(me.body.user.email).toBe(email);
  });
});
