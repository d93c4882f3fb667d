// A shard host for `npm run bench` (bench-shards.ts): one worker process with one engine thread, announced in Redis
// like a worker that joined, whose training sample is a seeded Gaussian set instead of a studio's originals.
// Args: REDIS_URL PREFIX WORKER_ID
import { hostname } from 'node:os';
import { Redis } from 'ioredis';
import { createLogger } from '../server/config/logger';
import { threadBudget } from '../server/engine';
import { computeKeys, WORKER_HEARTBEAT_MS, WORKER_TTL_MS } from '../server/jobs/compute/keys';
import { createShardHost } from '../server/jobs/compute/shard-host';
import { benchVectors } from './bench-shard-vectors';

const [redisUrl, prefix, workerId] = process.argv.slice(2);
threadBudget.configure(1);
const keys = computeKeys(prefix);
const redis = new Redis(redisUrl, { maxRetriesPerRequest: null });
const beat = () =>
  redis.multi().hset(keys.worker(workerId), { host: hostname(), threads: '1', startedAt: new Date().toISOString(), lastBeat: new Date().toISOString(), task: '' })
    .pexpire(keys.worker(workerId), WORKER_TTL_MS).sadd(keys.workers, workerId).exec();
await beat();
setInterval(() => void beat(), WORKER_HEARTBEAT_MS);
const host = createShardHost({
  redisUrl, prefix, workerId, logger: createLogger('info'),
  // The sample key carries n and the seed in maxVectors and seed.
  loadSample: async (sample) => benchVectors(sample.maxVectors, sample.dimension, sample.seed),
});
await host.start();
process.stdout.write('ready\n');
