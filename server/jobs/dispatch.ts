import { Queue, Worker, WaitingError, type Job as BullJob } from 'bullmq';
import { Redis } from 'ioredis';
import type { Logger } from '../config';

/**
 * BullMQ on Redis as the job engine: it hands each pending job to one process at a time, holds the job under a
 * lock its worker renews (the lease in Redis) and gives a job whose holder stopped renewing to another process
 * (stalled-job detection). It carries only job ids; what a job is and where it stands lives in MariaDB.
 */
export interface DispatchOptions {
  /** REDIS_URL. */
  redisUrl: string;
  /**
   * Key prefix of this studio's queues and channels: one studio is one database, so its name keeps studios (and
   * test databases) sharing one Redis apart.
   */
  prefix: string;
  /** How long a job's lock lasts unrenewed before another process may take the job (JOB_LEASE_MS). */
  leaseMs: number;
  /** Jobs this process runs at once (JOB_CONCURRENCY). */
  concurrency: number;
  logger: Logger;
}

/** What a delivered job asks of the runner; resolving acknowledges it, `release` hands it back for later. */
export type DeliveryHandler = (jobId: number, delivery: { release(): Promise<never> }) => Promise<void>;

export interface JobDispatch {
  /** Starts taking deliveries. */
  start(handler: DeliveryHandler): Promise<void>;
  /**
   * Makes sure each pending job (by id) is held by the queue: added when missing, added again when the queue has
   * finished with it (a Redis that was wiped, restored or lost a write). Safe to call from any number of processes.
   */
  ensure(jobIds: number[]): Promise<number[]>;
  /** Publishes to every process of this studio; `on` listens. */
  publish(channel: string, message: string): Promise<void>;
  subscribe(channel: string, listener: (message: string) => void): Promise<void>;
  /** Jobs waiting, active (taken by some process) and delayed. */
  depth(): Promise<{ waiting: number; active: number; delayed: number }>;
  /** Stops taking deliveries and waits for those in hand; closes every connection. */
  stop(): Promise<void>;
}

const QUEUE = 'jobs';
const bullId = (jobId: number) => `job-${jobId}`;
/** States in which the queue still holds a job for someone to run. */
const HELD = new Set(['waiting', 'active', 'delayed', 'prioritized', 'waiting-children']);

export function createJobDispatch(options: DispatchOptions): JobDispatch {
  const connection = { url: options.redisUrl, maxRetriesPerRequest: null };
  const queue = new Queue(QUEUE, { connection, prefix: options.prefix });
  queue.on('error', (err) => options.logger.warn({ err }, 'job queue connection error'));
  let worker: Worker | undefined;
  let publisher: Redis | undefined;
  let subscriber: Redis | undefined;
  const listeners = new Map<string, ((message: string) => void)[]>();
  const channelKey = (channel: string) => `${options.prefix}:${channel}`;

  const pub = () => (publisher ??= new Redis(options.redisUrl, { maxRetriesPerRequest: null }));

  return {
    async start(handler) {
      worker = new Worker(
        QUEUE,
        async (job: BullJob<{ jobId: number }>, token?: string) => {
          await handler(job.data.jobId, {
            async release() {
              // Back to the wait list for any process (this one is stopping); BullMQ's documented way out of a
              // processor without completing or failing the job.
              await job.moveToWait(token);
              throw new WaitingError();
            },
          });
        },
        {
          connection,
          prefix: options.prefix,
          concurrency: options.concurrency,
          lockDuration: options.leaseMs,
          // Interruptions are counted on the job's row (MAX_ATTEMPTS); the queue must never give up on a job itself.
          maxStalledCount: 1_000_000,
          stalledInterval: Math.max(1_000, Math.floor(options.leaseMs / 2)),
          removeOnComplete: { count: 0 },
          removeOnFail: { count: 0 },
        },
      );
      worker.on('error', (err) => options.logger.warn({ err }, 'job worker connection error'));
      await worker.waitUntilReady();
    },
    async ensure(jobIds) {
      const added: number[] = [];
      for (const id of jobIds) {
        const existing = await queue.getJob(bullId(id));
        if (existing) {
          const state = await existing.getState();
          if (HELD.has(state)) continue;
          await existing.remove().catch(() => undefined);
        }
        await queue.add('job', { jobId: id }, { jobId: bullId(id), removeOnComplete: true, removeOnFail: true });
        added.push(id);
      }
      return added;
    },
    async publish(channel, message) {
      await pub().publish(channelKey(channel), message);
    },
    async subscribe(channel, listener) {
      if (!subscriber) {
        subscriber = new Redis(options.redisUrl, { maxRetriesPerRequest: null });
        subscriber.on('error', (err) => options.logger.warn({ err }, 'job channel connection error'));
        subscriber.on('message', (key: string, message: string) => {
          for (const l of listeners.get(key) ?? []) l(message);
        });
      }
      const key = channelKey(channel);
      if (!listeners.has(key)) {
        listeners.set(key, []);
        await subscriber.subscribe(key);
      }
      listeners.get(key)!.push(listener);
    },
    async depth() {
      const c = await queue.getJobCounts('waiting', 'active', 'delayed', 'prioritized');
      return { waiting: (c.waiting ?? 0) + (c.prioritized ?? 0), active: c.active ?? 0, delayed: c.delayed ?? 0 };
    },
    async stop() {
      await worker?.close();
      await queue.close();
      subscriber?.disconnect();
      publisher?.disconnect();
    },
  };
}
