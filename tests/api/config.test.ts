import { mkdtempSync, readFileSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { ConfigError, loadConfig } from '../../server/config';

const dirs: string[] = [];
const tempDir = () => {
  const d = mkdtempSync(path.join(tmpdir(), 'cellwright-config-'));
  dirs.push(d);
  return d;
};
afterEach(() => {
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

describe('configuration', () => {
  it('uses the loopback defaults of the contract when the environment is empty', () => {
    const c = loadConfig({ DATA_DIR: tempDir() });
    expect(c.port).toBe(8420);
    expect(c.host).toBe('127.0.0.1');
    expect(c.db).toEqual({ host: '127.0.0.1', port: 3407, database: 'cellwright', user: 'cellwright', password: 'cellwright-dev' });
    expect(c.publicUrl).toBe('http://127.0.0.1:8420');
    expect(c.smtp).toMatchObject({ host: '127.0.0.1', port: 2526, secure: false, fake: true });
    expect(c.bcryptCost).toBe(12);
    expect(c.jwt.ttlSeconds).toBe(43_200);
    expect(c.loginRateLimit).toBe(20);
    expect(c.accountRateLimit).toBe(10);
    expect(c.loginBackoff).toEqual({ freeAttempts: 5, baseMs: 1000, maxMs: 60_000 });
    expect(c.mailQueue).toEqual({ maxAttempts: 8, retryBaseMs: 30_000, retryMaxMs: 3_600_000 });
    // Off unless named: X-Forwarded-* from any client would otherwise choose req.ip and req.secure.
    expect(c.trustProxy).toBe(false);
    expect(c.serveClient).toBe(false);
    expect(c.seedDemo).toBe(true);
  });

  it('is frozen all the way down', () => {
    const c = loadConfig({ DATA_DIR: tempDir() });
    expect(Object.isFrozen(c)).toBe(true);
    expect(Object.isFrozen(c.db)).toBe(true);
    expect(() => {
      (c.db as { port: number }).port = 1;
    }).toThrow(TypeError);
  });

  it('generates the JWT secret once, keeps it with mode 600 and reuses it', () => {
    const dataDir = tempDir();
    const first = loadConfig({ DATA_DIR: dataDir });
    const file = path.join(dataDir, 'secrets', 'jwt-secret');
    expect(statSync(file).mode & 0o777).toBe(0o600);
    expect(readFileSync(file, 'utf8').trim()).toBe(first.jwt.secret);
    // 48 random bytes in base64url are 64 characters.
    expect(first.jwt.secret).toMatch(/^[A-Za-z0-9_-]{64}$/);
    expect(loadConfig({ DATA_DIR: dataDir }).jwt.secret).toBe(first.jwt.secret);
  });

  it('refuses a bcrypt cost below 10, a short JWT secret and a malformed port, naming each', () => {
    try {
      loadConfig({ DATA_DIR: tempDir(), BCRYPT_COST: '8', JWT_SECRET: 'short', PORT: 'eighty' });
      expect.unreachable('loadConfig accepted a bad environment');
    } catch (err) {
      expect(err).toBeInstanceOf(ConfigError);
      const text = (err as ConfigError).issues.join('\n');
      expect(text).toContain('BCRYPT_COST');
      expect(text).toContain('JWT_SECRET');
      expect(text).toContain('PORT');
    }
  });

  it('serves the client by default in production and reads boolean flags', () => {
    const c = loadConfig({ DATA_DIR: tempDir(), NODE_ENV: 'production', FAKE_SMTP: 'false', SEED_DEMO: '0', PORT: '9000' });
    expect(c.serveClient).toBe(true);
    expect(c.smtp.fake).toBe(false);
    expect(c.seedDemo).toBe(false);
    expect(c.publicUrl).toBe('http://127.0.0.1:9000');
    expect(loadConfig({ DATA_DIR: tempDir(), NODE_ENV: 'production', SERVE_CLIENT: 'false' }).serveClient).toBe(false);
  });

  it('reads TRUST_PROXY as a hop count or the proxies\' addresses, and refuses true or a malformed entry', () => {
    const dir = tempDir();
    expect(loadConfig({ DATA_DIR: dir, TRUST_PROXY: 'loopback' }).trustProxy).toEqual(['loopback']);
    expect(loadConfig({ DATA_DIR: dir, TRUST_PROXY: '1' }).trustProxy).toBe(1);
    expect(loadConfig({ DATA_DIR: dir, TRUST_PROXY: '10.0.0.0/8, ::1' }).trustProxy).toEqual(['10.0.0.0/8', '::1']);
    expect(loadConfig({ DATA_DIR: dir, TRUST_PROXY: 'off' }).trustProxy).toBe(false);
    for (const bad of ['true', '10.0.0.0/33', 'proxy.example', 'loopback/8']) {
      expect(() => loadConfig({ DATA_DIR: dir, TRUST_PROXY: bad }), bad).toThrow(/TRUST_PROXY/);
    }
  });
});
