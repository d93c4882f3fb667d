import { Queue, QueueEvents, Worker } from 'bullmq';
import type { Redis } from 'ioredis';
import { randomBytes } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createRedisConnection } from '../../server/storage/redis-connection';
import { getFreePort } from '../helpers/ports';
import { testRedisUrl } from '../helpers/redis';

// The Redis of this test run (scripts/test.sh starts one per run with scripts/redis.sh and exports its URL).
let redis: Redis;
beforeAll(async () => {
  redis = createRedisConnection(testRedisUrl(), 'worker', 'cellwright-test');
  await redis.ping();
});
afterAll(async () => {
  await redis.quit();
});

async function configValue(name: string): Promise<string> {
  const [key, value] = (await redis.config('GET', name)) as string[];
  expect(key).toBe(name);
  return value;
}

describe('the Redis instance', () => {
  // BullMQ's "Going to production" guide: AOF persistence, and noeviction as the only safe memory policy.
  it('keeps an append-only file', async () => {
    expect(await configValue('appendonly')).toBe('yes');
  });

  it('never evicts keys to make room', async () => {
    expect(await configValue('maxmemory-policy')).toBe('noeviction');
  });

  it('listens on loopback only', async () => {
    expect(await configValue('bind')).toBe('127.0.0.1');
  });

  it('is not on 6379, the port of a system Redis', async () => {
    const port = Number(await configValue('port'));
    expect(port).toBe(Number(new URL(testRedisUrl()).port));
    expect(port).not.toBe(6379);
  });
});

describe('connections', () => {
  it('runs a BullMQ job through a producer queue and a worker on shared connections', async () => {
    const name = `cw-test-${randomBytes(4).toString('hex')}`;
    const producer = createRedisConnection(testRedisUrl(), 'producer');
    const consumer = createRedisConnection(testRedisUrl(), 'worker');
    const queue = new Queue(name, { connection: producer });
    // Worker and QueueEvents duplicate the shared connection for their blocking reads (BullMQ's "Connections" guide);
    // BullMQ refuses a shared connection for a Worker unless maxRetriesPerRequest is null.
    const events = new QueueEvents(name, { connection: consumer });
    const worker = new Worker(name, async (job) => (job.data as { n: number }).n * 2, { connection: consumer });
    try {
      await events.waitUntilReady();
      const job = await queue.add('double', { n: 21 });
      expect(await job.waitUntilFinished(events)).toBe(42);
    } finally {
      await worker.close();
      await events.close();
      await queue.obliterate({ force: true });
      await queue.close();
      await Promise.all([producer.quit(), consumer.quit()]);
    }
  });

  it('refuses a producer command at once while Redis is unreachable instead of holding it', async () => {
    const port = await getFreePort(); // nothing listens there
    const producer = createRedisConnection(`redis://127.0.0.1:${port}`, 'producer');
    producer.on('error', () => undefined); // the refused connection attempts; the command's rejection is checked
    try {
      await expect(producer.set('cw:probe', '1')).rejects.toThrow(/enableOfflineQueue|writeable|closed/i);
    } finally {
      producer.disconnect();
    }
  });
});
