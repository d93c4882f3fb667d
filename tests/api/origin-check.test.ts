// Mutating requests are taken only from the studio's own origin (PUBLIC_URL) and ALLOWED_ORIGINS, never from an
// origin merely equal to the request's Host: a DNS-rebinding page names its own host, resolved to this server.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ConfigError, loadConfig } from '../../server/config';
import { createTestApp, signUp, testPassword, uniqueEmail, type Session, type TestApp } from '../helpers/api';

let t: TestApp;
let s: Session;

beforeAll(async () => {
  t = await createTestApp({ ALLOWED_ORIGINS: ' http://127.0.0.1:5173 , HTTPS://Studio.Example.TEST:443/ ,' });
  s = await signUp(t.app);
});
afterAll(async () => {
  await t?.close();
});

const signUpBody = () => ({ email: uniqueEmail('origin'), password: testPassword, name: 'Origin Tester', teamName: 'Origin Team' });
const userCount = async () => Number(((await t.db.knex('users').count({ n: '*' })) as { n: number }[])[0].n);
const login = () => request(t.app).post('/api/auth/login');

describe('the Origin check', () => {
  it('refuses a foreign Origin equal to the request Host with 403, and creates nothing', async () => {
    const before = await userCount();
    for (const [host, origin] of [['evil.test', 'http://evil.test'], ['evil.test:8420', 'http://evil.test:8420']]) {
      const res = await request(t.app).post('/api/auth/signup').set('Host', host).set('Origin', origin).send(signUpBody());
      expect(res.status).toBe(403);
      expect(res.body.error).toMatchObject({ code: 'forbidden', message: expect.stringMatching(/ALLOWED_ORIGINS/) });
    }
    expect(await userCount()).toBe(before);
  });

  it("accepts PUBLIC_URL's origin and each ALLOWED_ORIGINS entry, and nothing near them", async () => {
    for (const origin of [t.publicUrl, 'http://127.0.0.1:5173', 'https://studio.example.test']) {
      expect((await login().set('Origin', origin).send({ email: s.user.email, password: testPassword })).status, origin).toBe(200);
    }
    for (const origin of ['http://127.0.0.1:5174', 'http://studio.example.test', 'https://studio.example.test.evil.test', 'http://localhost:8420']) {
      expect((await login().set('Origin', origin).send({ email: s.user.email, password: testPassword })).status, origin).toBe(403);
    }
  });

  it('refuses the opaque origin "null" (sandboxed frames, file: pages)', async () => {
    expect((await login().set('Origin', 'null').send({ email: s.user.email, password: testPassword })).status).toBe(403);
  });

  it('checks the Referer of a mutation that carries no Origin, and lets one with neither through', async () => {
    const foreign = await login().set('Referer', 'http://evil.test/rebind.html').send({ email: s.user.email, password: testPassword });
    expect(foreign.status).toBe(403);
    const own = await login().set('Referer', `${t.publicUrl}/sign-in`).send({ email: s.user.email, password: testPassword });
    expect(own.status).toBe(200);
    // Scripts and the command line send neither header.
    expect((await login().send({ email: s.user.email, password: testPassword })).status).toBe(200);
  });
});

describe('ALLOWED_ORIGINS', () => {
  const dataDir = mkdtempSync(path.join(tmpdir(), 'cellwright-origins-'));
  afterAll(() => rmSync(dataDir, { recursive: true, force: true }));

  it('holds the public origin first, then each listed origin once, in the form browsers send', () => {
    const c = loadConfig({ DATA_DIR: dataDir, JWT_SECRET: 'x'.repeat(40), PORT: '9000', ALLOWED_ORIGINS: 'https://A.example.test/, http://127.0.0.1:9000,https://a.example.test:443' });
    expect(c.allowedOrigins).toEqual(['http://127.0.0.1:9000', 'https://a.example.test']);
    expect(loadConfig({ DATA_DIR: dataDir, JWT_SECRET: 'x'.repeat(40) }).allowedOrigins).toEqual(['http://127.0.0.1:8420']);
  });

  it.each(['studio.example.test', 'https://a.example.test/app', 'https://a.example.test/?x=1', 'ftp://a.example.test', 'https://user@a.example.test'])(
    'refuses %s, naming ALLOWED_ORIGINS',
    (entry) => {
      try {
        loadConfig({ DATA_DIR: dataDir, JWT_SECRET: 'x'.repeat(40), ALLOWED_ORIGINS: `https://ok.example.test,${entry}` });
        expect.unreachable('loadConfig accepted a bad origin');
      } catch (err) {
        expect(err).toBeInstanceOf(ConfigError);
        expect((err as ConfigError).issues.join('\n')).toMatch(/^ALLOWED_ORIGINS\.1: .*(not a URL|not an origin)/);
      }
    },
  );
});
