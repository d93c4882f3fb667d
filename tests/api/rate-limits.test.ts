// Per client address limits on every account route (counted across e-mails), and the per-account backoff that
// replaces a lockout: a stranger can delay an account by at most the capped wait, never shut it for long.
// Clients are told apart with X-Forwarded-For, which the app believes only because TRUST_PROXY names loopback.
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { PasswordHasher } from '../../server/services';
import { createPasswordHasher } from '../../server/services';
import { createTestApp, signUp, testPassword, uniqueEmail, type TestApp } from '../helpers/api';
import { manualClock } from '../helpers/clock';
import { linkToken, waitForMail } from '../helpers/mailbox';

let next = 1;
/** A client address of its own for each use (TEST-NET-3, RFC 5737), so counters never leak between tests. */
const client = () => `203.0.113.${next++}`;

describe('per client address', () => {
  let t: TestApp;
  beforeAll(async () => {
    t = await createTestApp({ TRUST_PROXY: 'loopback', ACCOUNT_RATE_LIMIT: '3', LOGIN_RATE_LIMIT: '4' });
  });
  afterAll(async () => {
    await t?.close();
  });

  const post = (path: string, from: string, body: object) => request(t.app).post(path).set('X-Forwarded-For', from).send(body);

  it.each([
    ['/api/auth/signup', () => ({ email: uniqueEmail('spray') })],
    ['/api/auth/password-reset', () => ({ email: uniqueEmail('spray') })],
    ['/api/auth/password-reset/confirm', () => ({ token: 'F'.repeat(43), password: testPassword })],
    ['/api/auth/signup/complete', () => ({ token: 'G'.repeat(43), password: testPassword, name: 'N', teamName: 'T' })],
  ] as const)('answers the 4th request to %s from one address with 429 and Retry-After, whatever the e-mail, and not another address', async (path, body) => {
    const from = client();
    const statuses: number[] = [];
    for (let i = 0; i < 3; i += 1) statuses.push((await post(path, from, body())).status);
    expect(statuses.every((s) => s !== 429)).toBe(true);
    const fourth = await post(path, from, body());
    expect(fourth.status).toBe(429);
    expect(fourth.body.error.code).toBe('rate_limited');
    // RFC 6585 §4: a 429 may say how long to wait; RFC 9110 §10.2.3: Retry-After in seconds.
    expect(Number(fourth.headers['retry-after'])).toBeGreaterThan(0);
    expect((await post(path, client(), body())).status).not.toBe(429);
    await t.composition.services.accounts.settle();
  });

  it('sends one address at most five account mails an hour, however many clients ask (no mailbox flooding)', async () => {
    const s = await signUp(t.app);
    for (let i = 0; i < 4; i += 1) {
      expect((await post('/api/auth/password-reset', client(), { email: s.user.email })).status).toBe(202);
      expect((await post('/api/auth/signup', client(), { email: s.user.email })).status).toBe(202);
    }
    await t.composition.services.accounts.settle();
    // The sign-up link that made the account, then four more: the rest were answered 202 and sent nothing.
    const mails = await t.db.knex('mail_queue').where({ recipient: s.user.email }).whereNull('team_id');
    expect(mails).toHaveLength(5);
  });

  it('counts failed sign-ins across e-mails, so a password spray is stopped, while other clients go on', async () => {
    const victim = await signUp(t.app);
    const sprayer = client();
    for (let i = 0; i < 4; i += 1) expect((await post('/api/auth/login', sprayer, { email: uniqueEmail('sprayed'), password: 'Summer2026!x' })).status).toBe(401);
    const fifth = await post('/api/auth/login', sprayer, { email: victim.user.email, password: 'Summer2026!x' });
    expect(fifth.status).toBe(429);
    expect(Number(fifth.headers['retry-after'])).toBeGreaterThan(0);
    expect((await post('/api/auth/login', client(), { email: victim.user.email, password: testPassword })).status).toBe(200);
  });

  it('does not count successful sign-ins, so an office behind one address is never held back', async () => {
    const s = await signUp(t.app);
    const office = client();
    for (let i = 0; i < 8; i += 1) expect((await post('/api/auth/login', office, { email: s.user.email, password: testPassword })).status).toBe(200);
  });
});

describe('without TRUST_PROXY', () => {
  let t: TestApp;
  beforeAll(async () => {
    t = await createTestApp({ ACCOUNT_RATE_LIMIT: '2' });
  });
  afterAll(async () => {
    await t?.close();
  });

  it('ignores X-Forwarded-For, so a client cannot pick a fresh address for every request', async () => {
    const statuses: number[] = [];
    for (let i = 0; i < 3; i += 1) {
      statuses.push((await request(t.app).post('/api/auth/signup').set('X-Forwarded-For', client()).send({ email: uniqueEmail('forger') })).status);
    }
    expect(statuses).toEqual([202, 202, 429]);
    await t.composition.services.accounts.settle();
  });
});

describe('per-account backoff', () => {
  const clock = manualClock();
  let t: TestApp;
  beforeAll(async () => {
    // Address limits out of the way: this is about the account, whatever address the guesses come from.
    t = await createTestApp({ TRUST_PROXY: 'loopback', LOGIN_BACKOFF_MAX_SECONDS: '60' }, { now: clock.now });
  });
  afterAll(async () => {
    await t?.close();
  });

  const login = (from: string, email: string, password: string) =>
    request(t.app).post('/api/auth/login').set('X-Forwarded-For', from).send({ email, password });

  it('delays an account after five failures, doubling up to the cap, and lets the owner in from elsewhere once it passes', async () => {
    const owner = await signUp(t.app);
    const attacker = client();
    for (let i = 0; i < 5; i += 1) expect((await login(attacker, owner.user.email, `guess-number-${i}`)).status).toBe(401);

    // Each further failure opens a wait of 1 s, 2 s, 4 s … (the guess is still checked and still wrong: 401).
    const waits: number[] = [];
    for (let i = 0; i < 9; i += 1) {
      expect((await login(attacker, owner.user.email, `more-guesses-${i}`)).status).toBe(401);
      const held = await login(attacker, owner.user.email, `during-the-wait-${i}`);
      expect(held.status).toBe(429);
      expect(held.body.error.code).toBe('rate_limited');
      waits.push(Number(held.headers['retry-after']));
      clock.advance(waits[i] * 1000);
    }
    expect(waits).toEqual([1, 2, 4, 8, 16, 32, 60, 60, 60]);

    // Hammering during a wait is neither checked nor counted: the next wait is still the cap, not longer.
    expect((await login(attacker, owner.user.email, 'one-more-guess')).status).toBe(401);
    for (let i = 0; i < 20; i += 1) expect((await login(attacker, owner.user.email, `hammer-${i}`)).status).toBe(429);

    // The owner, from another address, with the right password: told to wait at most the cap…
    const home = client();
    const early = await login(home, owner.user.email, testPassword);
    expect(early.status).toBe(429);
    const wait = Number(early.headers['retry-after']);
    expect(wait).toBeGreaterThan(0);
    expect(wait).toBeLessThanOrEqual(60);
    // …and let in once it has passed, after which the account starts afresh.
    clock.advance(wait * 1000);
    const inside = await login(home, owner.user.email, testPassword);
    expect(inside.status).toBe(200);
    expect((await login(attacker, owner.user.email, 'fresh-start-guess')).status).toBe(401);
  });

  it('lets the owner in after the capped wait even from the address the guesses came from (a shared proxy)', async () => {
    const owner = await signUp(t.app);
    const office = client();
    for (let i = 0; i < 12; i += 1) {
      const res = await login(office, owner.user.email, `colleague-guess-${i}`);
      if (res.status === 429) clock.advance(Number(res.headers['retry-after']) * 1000);
    }
    const held = await login(office, owner.user.email, testPassword);
    expect(held.status).toBe(429);
    clock.advance(Number(held.headers['retry-after']) * 1000);
    expect((await login(office, owner.user.email, testPassword)).status).toBe(200);
  });

  it('answers an address without an account the same way, so the delay tells nothing', async () => {
    const owner = await signUp(t.app);
    const ghost = uniqueEmail('ghost');
    const answers = async (email: string) => {
      const from = client();
      const out: [number, unknown][] = [];
      for (let i = 0; i < 7; i += 1) {
        const res = await login(from, email, `not-it-${i}`);
        out.push([res.status, res.body.error?.code]);
      }
      return out;
    };
    expect(await answers(ghost)).toEqual(await answers(owner.user.email));
  });
});

describe('slow hashing only after the link is known good', () => {
  let t: TestApp;
  let hashes = 0;
  const real = createPasswordHasher(10);
  const counting: PasswordHasher = {
    hash: (password) => {
      hashes += 1;
      return real.hash(password);
    },
    verify: (password, hash) => real.verify(password, hash),
  };
  beforeAll(async () => {
    t = await createTestApp({}, { passwords: counting });
  });
  afterAll(async () => {
    await t?.close();
  });

  it('runs no bcrypt for a reset-confirm or sign-up completion with an unknown, spent or expired token, and one for a good token', async () => {
    const s = await signUp(t.app);
    await request(t.app).post('/api/auth/password-reset').send({ email: s.user.email });
    await t.composition.services.accounts.settle();
    const firstMail = await waitForMail(t.db.knex, s.user.email, { subject: /reset/i });
    const { token } = linkToken(firstMail, 'reset-password');

    const before = hashes;
    const bad = [
      await request(t.app).post('/api/auth/password-reset/confirm').send({ token: 'H'.repeat(43), password: 'brand-new-password-1' }),
      await request(t.app).post('/api/auth/signup/complete').send({ token: 'H'.repeat(43), password: 'brand-new-password-1', name: 'N', teamName: 'T' }),
    ];
    expect(bad.map((r) => r.status)).toEqual([400, 400]);
    expect(hashes).toBe(before);

    expect((await request(t.app).post('/api/auth/password-reset/confirm').send({ token, password: 'brand-new-password-1' })).status).toBe(204);
    expect(hashes).toBe(before + 1);

    const spent = await request(t.app).post('/api/auth/password-reset/confirm').send({ token, password: 'brand-new-password-2' });
    expect(spent.status).toBe(410);
    expect(hashes).toBe(before + 1);

    await request(t.app).post('/api/auth/password-reset').send({ email: s.user.email });
    await t.composition.services.accounts.settle();
    const late = linkToken(await waitForMail(t.db.knex, s.user.email, { subject: /reset/i, afterId: firstMail.id }), 'reset-password');
    await t.db.knex('password_resets').where({ user_id: s.user.id }).update({ expires_at: new Date(Date.now() - 1000) });
    const expired = await request(t.app).post('/api/auth/password-reset/confirm').send({ token: late.token, password: 'brand-new-password-3' });
    expect(expired.status).toBe(410);
    expect(hashes).toBe(before + 1);
  });
});
