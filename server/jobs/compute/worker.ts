import { WaitingError, Worker, type Job as BullJob } from 'bullmq';
import { Redis } from 'ioredis';
import type { Logger } from '../../config';
import type { JobProgress } from '../../contracts';
import { computeKeys, TASK_QUEUE, WORKER_HEARTBEAT_MS, WORKER_TTL_MS } from './keys';
import { createShardSpread, type ShardSpread } from './shard-coordinator';
import { createShardHost, type ShardHost } from './shard-host';
import type { TrainingSample } from './shard-wire';
import { fromWire, toWire, type ComputeTask, type ServedBy } from './tasks';

export interface WorkerIdentity {
  workerId: string;
  host: string;
  /** ENGINE_THREADS of this worker. */
  threads: number;
}

export interface ComputeWorkerOptions {
  redisUrl: string;
  prefix: string;
  identity: WorkerIdentity;
  /** How long a task's lock lasts unrenewed before another worker may take the task over (JOB_LEASE_MS). */
  leaseMs: number;
  logger: Logger;
  /** Computes one task; `signal` aborts on cancellation and on stop; `spread` spreads training shards over the workers. */
  execute(task: ComputeTask, ctx: { signal: AbortSignal; progress(p: JobProgress): void; spread: ShardSpread }): Promise<unknown>;
  /** Draws a run's training sample here, for the shards of other workers' training tasks this worker hosts. */
  loadSample(sample: TrainingSample, signal: AbortSignal): Promise<Float32Array>;
}

export interface ComputeWorker {
  start(): Promise<void>;
  /** Stops taking tasks; a task in hand is aborted and left for another worker. */
  stop(): Promise<void>;
}

/** The task a worker is on, as the workers page shows it. */
export interface CurrentTask {
  taskId: string;
  kind: ComputeTask['kind'];
  jobId: number;
  teamId: number;
  since: string;
}

/**
 * Takes compute tasks one at a time (a task already spreads over the worker's ENGINE_THREADS), announces itself
 * and its current task in Redis every WORKER_HEARTBEAT_MS, and drops a task the studio cancels within a second.
 */
export function createComputeWorker(options: ComputeWorkerOptions): ComputeWorker {
  const keys = computeKeys(options.prefix);
  const { identity, logger } = options;
  const startedAt = new Date().toISOString();
  let worker: Worker | undefined;
  let redis: Redis | undefined;
  let subscriber: Redis | undefined;
  let beatTimer: NodeJS.Timeout | undefined;
  let current: { task: CurrentTask; controller: AbortController } | null = null;
  const spread = createShardSpread({ redisUrl: options.redisUrl, prefix: options.prefix, logger });
  let host: ShardHost | undefined;
  let stopping = false;

  async function beat(): Promise<void> {
    if (!redis) return;
    const key = keys.worker(identity.workerId);
    await redis
      .multi()
      .hset(key, {
        host: identity.host,
        threads: String(identity.threads),
        pid: String(process.pid),
        startedAt,
        lastBeat: new Date().toISOString(),
        task: current ? JSON.stringify(current.task) : '',
      })
      .pexpire(key, WORKER_TTL_MS)
      .sadd(keys.workers, identity.workerId)
      .exec();
  }
  const beatSoon = () => void beat().catch((err: unknown) => logger.warn({ err }, 'worker heartbeat failed'));

  async function processTask(job: BullJob<{ taskId: string; wire: string }>, token?: string): Promise<string> {
    // A stopping worker leaves the task to another one instead of failing it (BullMQ's way out of a processor).
    const handBack = async (): Promise<never> => {
      await job.moveToWait(token);
      throw new WaitingError();
    };
    if (stopping) return handBack();
    const task = fromWire<ComputeTask>(job.data.wire);
    const controller = new AbortController();
    current = { task: { taskId: job.data.taskId, kind: task.kind, jobId: task.jobId, teamId: task.teamId, since: new Date().toISOString() }, controller };
    beatSoon();
    try {
      const result = await options.execute(task, {
        signal: controller.signal,
        spread,
        progress: (progress) => void redis?.publish(keys.progressChannel, JSON.stringify({ taskId: job.data.taskId, progress })).catch(() => undefined),
      });
      const servedBy: ServedBy = { workerId: identity.workerId, host: identity.host };
      // The result waits for the coordinator under its own key; the queue only says the task is done.
      await redis!.set(keys.result(job.data.taskId), toWire({ result, servedBy }), 'PX', 24 * 3600_000);
      return 'done';
    } catch (err) {
      if (stopping) return handBack();
      throw err;
    } finally {
      current = null;
      beatSoon();
    }
  }

  return {
    async start() {
      stopping = false;
      redis = new Redis(options.redisUrl, { maxRetriesPerRequest: null });
      subscriber = new Redis(options.redisUrl, { maxRetriesPerRequest: null });
      redis.on('error', (err) => logger.warn({ err }, 'worker connection error'));
      subscriber.on('error', (err) => logger.warn({ err }, 'worker channel connection error'));
      subscriber.on('message', (_channel: string, taskId: string) => {
        if (current?.task.taskId !== taskId) return;
        logger.info({ taskId, jobId: current.task.jobId, kind: current.task.kind }, 'task cancelled by the studio');
        current.controller.abort(new Error('the task was cancelled'));
      });
      await subscriber.subscribe(keys.cancelChannel);
      await beat();
      beatTimer = setInterval(beatSoon, WORKER_HEARTBEAT_MS);
      beatTimer.unref();
      worker = new Worker(TASK_QUEUE, processTask, {
        connection: { url: options.redisUrl, maxRetriesPerRequest: null },
        prefix: options.prefix,
        concurrency: 1,
        lockDuration: options.leaseMs,
        // A task whose worker vanished goes to another worker however often that happens; the job's own attempts
        // (on its row) bound the retries of the whole job.
        maxStalledCount: 1_000_000,
        stalledInterval: Math.max(1_000, Math.floor(options.leaseMs / 2)),
      });
      worker.on('error', (err) => logger.warn({ err }, 'worker queue connection error'));
      await worker.waitUntilReady();
      host = createShardHost({ redisUrl: options.redisUrl, prefix: options.prefix, workerId: identity.workerId, logger, loadSample: options.loadSample });
      await host.start();
      logger.info({ workerId: identity.workerId, host: identity.host, threads: identity.threads }, 'worker ready');
    },
    async stop() {
      stopping = true;
      clearInterval(beatTimer);
      current?.controller.abort(new Error('the worker is stopping'));
      await worker?.close();
      await host?.stop();
      host = undefined;
      spread.close();
      if (redis) {
        await redis.multi().del(keys.worker(identity.workerId)).srem(keys.workers, identity.workerId).exec().catch(() => undefined);
        redis.disconnect();
      }
      subscriber?.disconnect();
      worker = undefined;
      redis = undefined;
      subscriber = undefined;
    },
  };
}
