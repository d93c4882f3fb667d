import { randomUUID } from 'node:crypto';
import { Queue, QueueEvents } from 'bullmq';
import { Redis } from 'ioredis';
import type { Logger } from '../../config';
import type { JobProgress } from '../../contracts';
import { computeKeys, TASK_QUEUE } from './keys';
import { fromWire, toWire, type ComputeResult, type ComputeTask, type ServedBy } from './tasks';

export interface ComputeClient {
  /**
   * Hands a task to whichever worker takes it first (the studio's own or one that joined), grants that worker the
   * task's originals, forwards its progress, and resolves with its result. A worker that stops mid-task loses the
   * task to another one (the job engine's stalled-job detection); aborting the signal cancels it on the worker.
   */
  run<T extends ComputeTask>(task: T, options: { signal: AbortSignal; progress(p: JobProgress): void }): Promise<{ result: ComputeResult<T>; servedBy: ServedBy }>;
  /** Tasks waiting for a worker and tasks being computed. */
  depth(): Promise<{ waiting: number; active: number }>;
  close(): Promise<void>;
}

export function createComputeClient(options: { redisUrl: string; prefix: string; logger: Logger }): ComputeClient {
  const keys = computeKeys(options.prefix);
  const connection = { url: options.redisUrl, maxRetriesPerRequest: null };
  let parts: { queue: Queue; events: QueueEvents; redis: Redis; subscriber: Redis } | undefined;
  const progressListeners = new Map<string, (p: JobProgress) => void>();

  async function connect() {
    if (parts) return parts;
    const queue = new Queue(TASK_QUEUE, { connection, prefix: options.prefix });
    const events = new QueueEvents(TASK_QUEUE, { connection, prefix: options.prefix });
    const redis = new Redis(options.redisUrl, { maxRetriesPerRequest: null });
    const subscriber = new Redis(options.redisUrl, { maxRetriesPerRequest: null });
    const warn = (err: unknown) => options.logger.warn({ err }, 'compute queue connection error');
    queue.on('error', warn);
    events.on('error', warn);
    redis.on('error', warn);
    subscriber.on('error', warn);
    subscriber.on('message', (_channel: string, message: string) => {
      const { taskId, progress } = JSON.parse(message) as { taskId: string; progress: JobProgress };
      progressListeners.get(taskId)?.(progress);
    });
    await subscriber.subscribe(keys.progressChannel);
    await events.waitUntilReady();
    parts = { queue, events, redis, subscriber };
    return parts;
  }

  return {
    async run(task, { signal, progress }) {
      signal.throwIfAborted();
      const { queue, events, redis } = await connect();
      const taskId = randomUUID();
      const digests = [...new Set(task.images.map((i) => i.sha256))];
      // The grant outlives no task by much: it is removed at the end, and expires on its own if this process dies.
      if (digests.length > 0) await redis.multi().sadd(keys.grant(taskId), ...digests).pexpire(keys.grant(taskId), 24 * 3600_000).exec();
      progressListeners.set(taskId, progress);
      const onAbort = () => {
        void redis.publish(keys.cancelChannel, taskId).catch(() => undefined);
        void queue.remove(`task-${taskId}`).catch(() => undefined);
      };
      signal.addEventListener('abort', onAbort, { once: true });
      try {
        const job = await queue.add('task', { taskId, wire: toWire(task) }, { jobId: `task-${taskId}`, removeOnComplete: true, removeOnFail: true });
        const finished = job.waitUntilFinished(events);
        const aborted = new Promise<never>((_resolve, reject) => {
          if (signal.aborted) reject(signal.reason);
          signal.addEventListener('abort', () => reject(signal.reason), { once: true });
        });
        await Promise.race([finished, aborted]);
        const wire = await redis.getdel(keys.result(taskId));
        if (!wire) throw new Error('the worker finished the task but its result was lost; the job will run again');
        return fromWire(wire);
      } finally {
        signal.removeEventListener('abort', onAbort);
        progressListeners.delete(taskId);
        await redis.del(keys.grant(taskId)).catch(() => undefined);
      }
    },
    async depth() {
      const { queue } = await connect();
      const c = await queue.getJobCounts('waiting', 'active', 'delayed', 'prioritized');
      return { waiting: (c.waiting ?? 0) + (c.prioritized ?? 0) + (c.delayed ?? 0), active: c.active ?? 0 };
    },
    async close() {
      const p = parts;
      parts = undefined;
      if (!p) return;
      await p.events.close();
      await p.queue.close();
      p.redis.disconnect();
      p.subscriber.disconnect();
    },
  };
}
