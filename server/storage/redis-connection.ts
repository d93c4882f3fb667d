import { Redis, type RedisOptions } from 'ioredis';

/**
 * What a connection is for, which decides how it behaves while Redis is unreachable (BullMQ's "Connections" and
 * "Going to production" guides):
 * - `worker`: BullMQ Workers, QueueEvents and pub/sub subscribers. They sit in blocking commands and must wait for
 *   a reconnect instead of failing, so `maxRetriesPerRequest` is null (BullMQ refuses a shared connection for a
 *   Worker otherwise).
 * - `producer`: Queues that add jobs on behalf of an HTTP request. Commands fail at once while disconnected
 *   (`enableOfflineQueue: false`, BullMQ's "Failing fast when Redis is down") so no request hangs; the jobs' rows in
 *   MariaDB stay the record and are queued again once Redis is back.
 */
export type RedisPurpose = 'worker' | 'producer';

/** ioredis options for `purpose`; the server, credentials and database come from the URL. */
export function redisOptions(purpose: RedisPurpose, connectionName: string): RedisOptions {
  const common: RedisOptions = {
    // Shows in CLIENT LIST, so an operator can tell the studio's connections from a worker's.
    connectionName,
    // Reconnect forever, from 1 s up to 20 s between tries (BullMQ's own default strategy).
    retryStrategy: (times) => Math.max(Math.min(Math.exp(times), 20_000), 1_000),
  };
  return purpose === 'worker'
    ? { ...common, maxRetriesPerRequest: null }
    : { ...common, maxRetriesPerRequest: 1, enableOfflineQueue: false };
}

/**
 * An ioredis connection to `url` (config.redis.url) for `purpose`. BullMQ classes take it as their `connection`;
 * a Worker or QueueEvents duplicates it for its blocking commands. The caller closes it (`quit()`).
 */
export function createRedisConnection(url: string, purpose: RedisPurpose, connectionName = `cellwright-${purpose}`): Redis {
  return new Redis(url, redisOptions(purpose, connectionName));
}
