import { Writable } from 'node:stream';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../server/app';
import { compose } from '../../server/composition';
import { createLogger, loadConfig } from '../../server/config';
import { healthResponse } from '../../server/contracts';
import { bearer, createTestApp, signUp, testPassword, uniqueEmail, type TestApp } from '../helpers/api';
import { getFreePort } from '../helpers/ports';

let t: TestApp;
beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => {
  await t?.close();
});

describe('health', () => {
  it('reports status ok and the database up', async () => {
    const res = await request(t.app).get('/api/health');
    expect(res.status).toBe(200);
    expect(healthResponse.parse(res.body)).toMatchObject({ status: 'ok', database: 'up' });
  });

  it('reports degraded with 503 when the database cannot be reached, and other routes answer 503', async () => {
    const deadPort = await getFreePort();
    const config = loadConfig({ NODE_ENV: 'test', DB_PORT: String(deadPort), JWT_SECRET: 'x'.repeat(40), SERVE_CLIENT: 'false', BCRYPT_COST: '10' });
    const c = compose(config);
    try {
      const app = createApp(c);
      const health = await request(app).get('/api/health');
      expect(health.status).toBe(503);
      expect(health.body).toMatchObject({ status: 'degraded', database: 'down' });
      const login = await request(app).post('/api/auth/login').send({ email: uniqueEmail(), password: testPassword });
      expect(login.status).toBe(503);
      expect(login.body.error.code).toBe('service_unavailable');
    } finally {
      await c.close();
    }
  });
});

// Rate limits and the sign-in backoff: tests/api/rate-limits.test.ts.

describe('cross-site requests', () => {
  it('refuses a mutating request carrying a foreign Origin with 403, and changes nothing', async () => {
    const email = uniqueEmail('csrf');
    const res = await request(t.app)
      .post('/api/auth/signup')
      .set('Origin', 'https://attacker.example')
      .send({ email });
    expect(res.status).toBe(403);
    expect(res.body.error.code).toBe('forbidden');
    await t.composition.services.accounts.settle();
    expect(await t.db.knex('signup_links').where({ email }).first()).toBeUndefined();
    expect(await t.db.knex('mail_queue').where({ recipient: email }).first()).toBeUndefined();
  });

  it('accepts the configured public origin', async () => {
    const s = await signUp(t.app);
    const fromPublic = await request(t.app)
      .post('/api/auth/login')
      .set('Origin', t.publicUrl)
      .send({ email: s.user.email, password: testPassword });
    expect(fromPublic.status).toBe(200);
  });

  it('lets a GET with a foreign Origin through, since it changes nothing', async () => {
    const s = await signUp(t.app);
    const res = await request(t.app).get('/api/me').set('Origin', 'https://attacker.example').set(bearer(s));
    expect(res.status).toBe(200);
  });
});

describe('headers and malformed requests', () => {
  it('sends the security headers with a self-only content security policy', async () => {
    const res = await request(t.app).get('/api/health');
    const csp = res.headers['content-security-policy'] as string;
    expect(csp).toContain("default-src 'self'");
    expect(csp).toContain("script-src 'self'");
    expect(csp).toContain("img-src 'self' data: blob:");
    expect(csp).toContain("frame-ancestors 'none'");
    expect(res.headers['x-content-type-options']).toBe('nosniff');
    expect(res.headers['x-frame-options']).toBe('SAMEORIGIN');
    expect(res.headers['referrer-policy']).toBe('no-referrer');
    expect(res.headers['x-powered-by']).toBeUndefined();
  });

  it('answers malformed JSON with 400 bad_request', async () => {
    const res = await request(t.app).post('/api/auth/login').set('Content-Type', 'application/json').send('{"email": ');
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('bad_request');
  });

  it('answers a body over 1 MB with 413 payload_too_large', async () => {
    const res = await request(t.app)
      .post('/api/auth/signup')
      .set('Content-Type', 'application/json')
      .send(JSON.stringify({ email: 'a@b.test', password: 'p'.repeat(1_100_000), name: 'n', teamName: 't' }));
    expect(res.status).toBe(413);
    expect(res.body.error.code).toBe('payload_too_large');
  });

  it('answers a body that is not JSON with 415 unsupported_media_type', async () => {
    const res = await request(t.app).post('/api/auth/login').set('Content-Type', 'text/plain').send('email=a@b.test');
    expect(res.status).toBe(415);
    expect(res.body.error.code).toBe('unsupported_media_type');
  });

  it('answers an unknown API route with 404 JSON', async () => {
    const res = await request(t.app).delete('/api/nothing/here');
    expect(res.status).toBe(404);
    expect(res.body).toEqual({ error: { code: 'not_found', message: expect.any(String) } });
  });
});

describe('logging', () => {
  it('never writes authorization headers, cookies, passwords or tokens to the log', async () => {
    const lines: string[] = [];
    const sink = new Writable({
      write(chunk, _enc, done) {
        lines.push(String(chunk));
        done();
      },
    });
    const logger = createLogger('info', sink);
    const app = createApp({ ...t.composition, logger });
    const s = await signUp(t.app);
    await request(app).post('/api/auth/login').set('Cookie', s.cookie).send({ email: s.user.email, password: testPassword });
    await request(app).get('/api/me').set(bearer(s));
    logger.info({ body: { email: s.user.email, password: testPassword }, token: s.token }, 'a careless call site');
    const text = lines.join('');
    expect(lines.length).toBeGreaterThanOrEqual(3);
    expect(text).toContain('[redacted]');
    expect(text).not.toContain(s.token);
    expect(text).not.toContain(testPassword);
  });
});
