import { loadConfig } from '../../server/config';

/**
 * The Redis the tests use: REDIS_URL as `npm test` sets it (a throwaway instance of scripts/redis.sh), else what
 * the studio's own settings name (the development instance on REDIS_PORT), read through the one parser.
 */
export function testRedisUrl(): string {
  // A placeholder secret keeps the configuration from writing a key file; only the Redis settings are read.
  return loadConfig({ REDIS_URL: process.env.REDIS_URL, REDIS_PORT: process.env.REDIS_PORT, JWT_SECRET: 'x'.repeat(32) }).redis.url;
}
