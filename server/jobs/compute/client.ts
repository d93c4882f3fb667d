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

/** How often a waiting coordinator checks that its task is still in the queue. */
const VANISH_CHECK_MS = 1_000;

/**
 * Resolves once the task is no longer in the queue (finished and removed, or lost with Redis's data), and rejects
 * with the worker's reason once it failed: either may happen without its event reaching this process (a Redis that
 * restarted drops the subscription).
 */
async function vanished(queue: Queue, jobId: string, signal: AbortSignal): Promise<'vanished'> {
  for (;;) {
    await new Promise((resolve) => setTimeout(resolve, VANISH_CHECK_MS).unref());
    if (signal.aborted) return new Promise<never>(() => undefined);
    const job = await queue.getJob(jobId).catch(() => 'unknown' as const);
    if (job === undefined || job === null) return 'vanished';
    if (job !== 'unknown' && (await job.getState().catch(() => 'unknown')) === 'failed') throw new Error(job.failedReason || 'the task failed');
  }
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
      const jobId = `task-${taskId}`;
      const digests = [...new Set(task.images.map((i) => i.sha256))];
      const wire = toWire(task);
      // Granted (again) before each submission: a Redis that lost the task lost its grant with it. The grant
      // outlives no task by much: it is removed at the end, and expires on its own if this process dies.
      const submit = async () => {
        if (digests.length > 0) await redis.multi().sadd(keys.grant(taskId), ...digests).pexpire(keys.grant(taskId), 24 * 3600_000).exec();
        // A failed task stays until this coordinator has read why (below, then removed); a finished one goes at once.
        return queue.add('task', { taskId, wire }, { jobId, removeOnComplete: true, removeOnFail: false });
      };
      progressListeners.set(taskId, progress);
      const onAbort = () => {
        void redis.publish(keys.cancelChannel, taskId).catch(() => undefined);
        void queue.remove(jobId).catch(() => undefined);
      };
      signal.addEventListener('abort', onAbort, { once: true });
      let rejectAborted: () => void = () => undefined;
      const aborted = new Promise<never>((_resolve, reject) => {
        rejectAborted = () => reject(signal.reason);
        if (signal.aborted) rejectAborted();
      });
      aborted.catch(() => undefined);
      // Removed when the task ends: a job's signal serves many tasks (an evaluation's image groups), and listeners
      // left behind would pile up on it.
      signal.addEventListener('abort', rejectAborted, { once: true });
      try {
        for (;;) {
          const job = await submit();
          const outcome = await Promise.race([job.waitUntilFinished(events).then(() => 'finished' as const), vanished(queue, jobId, signal), aborted]);
          // Finished, or gone from the queue: a result means it was computed (its event may have been missed);
          // no result means Redis lost the task, which is then submitted again.
          const result = await redis.getdel(keys.result(taskId));
          if (result) return fromWire(result);
          if (outcome === 'finished') throw new Error('the worker finished the task but its result was lost; the job will run again');
          options.logger.warn({ taskId, kind: task.kind, jobId: task.jobId }, 'a compute task vanished from Redis; submitting it again');
        }
      } finally {
        signal.removeEventListener('abort', onAbort);
        signal.removeEventListener('abort', rejectAborted);
        progressListeners.delete(taskId);
        await redis.del(keys.grant(taskId)).catch(() => undefined);
        await queue.remove(jobId).catch(() => undefined);
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
