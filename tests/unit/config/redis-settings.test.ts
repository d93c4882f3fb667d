import { describe, expect, it } from 'vitest';
import { ConfigError, loadConfig } from '../../../server/config';

const load = (env: Record<string, string>) => loadConfig({ DATA_DIR: '/nonexistent/cellwright', JWT_SECRET: 'j'.repeat(32), ...env });
const issues = (env: Record<string, string>): string[] => {
  try {
    load(env);
  } catch (err) {
    if (err instanceof ConfigError) return err.issues;
    throw err;
  }
  return [];
};

describe('Redis settings', () => {
  it('names the private instance on loopback port 6407 by default', () => {
    expect(load({}).redis).toEqual({ url: 'redis://127.0.0.1:6407' });
  });

  it('follows REDIS_PORT when no REDIS_URL is given', () => {
    expect(load({ REDIS_PORT: '6500' }).redis.url).toBe('redis://127.0.0.1:6500');
  });

  it('uses REDIS_URL as given, credentials, TLS and database included', () => {
    const url = 'rediss://queue:pw@redis.example.test:6380/3';
    expect(load({ REDIS_URL: url, REDIS_PORT: '6500' }).redis.url).toBe(url);
  });

  it('refuses REDIS_PORT 6379, the port of a system Redis', () => {
    expect(issues({ REDIS_PORT: '6379' })).toEqual([expect.stringMatching(/^REDIS_PORT: .*6379/)]);
  });

  it.each(['http://127.0.0.1:6407', 'redis://', 'redis://host:6407/queues', '127.0.0.1:6407', 'redis://host?db=1'])(
    'refuses %s as REDIS_URL',
    (url) => {
      expect(issues({ REDIS_URL: url })).toEqual([expect.stringMatching(/^REDIS_URL: .* is not a Redis URL/)]);
    },
  );
});

describe('worker token settings', () => {
  it('keeps the token file beside the other secrets unless WORKER_TOKEN_FILE names one', () => {
    expect(load({}).workerToken).toEqual({ value: undefined, file: '/nonexistent/cellwright/secrets/worker-token' });
    expect(load({ WORKER_TOKEN_FILE: '/etc/cellwright/token' }).workerToken.file).toBe('/etc/cellwright/token');
  });

  it('refuses a WORKER_TOKEN shorter than 32 characters', () => {
    expect(issues({ WORKER_TOKEN: 'x'.repeat(31) })).toEqual(['WORKER_TOKEN: WORKER_TOKEN must be at least 32 characters']);
  });
});
