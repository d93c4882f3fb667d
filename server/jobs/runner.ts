import type { Logger } from '../config';
import { jobInputs, type JobKind, type JobProgress, type JobState } from '../contracts';
import type { JobEventBus } from './events';
import { JobCancelledError, type Job, type JobQueue, type Transition } from './queue';
import type { JobDeps, JobHandler, JobHandlers } from './types';

export interface RunnerOptions {
  queue: JobQueue;
  bus: JobEventBus;
  handlers: JobHandlers;
  deps: JobDeps;
  logger: Logger;
  /** Jobs run at once (JOB_CONCURRENCY). */
  concurrency: number;
  /** How often to look for queued jobs when nothing woke the runner. */
  pollIntervalMs?: number;
  /** How often running jobs are marked alive and checked for cancellation by another process. */
  heartbeatMs?: number;
  /** Least time between two progress writes of one job (the bus gets every report). */
  progressIntervalMs?: number;
  /** Called after a job reached a terminal state; failures are logged, never rethrown. */
  onFinished?: (job: Job, state: JobState, error: string | null) => Promise<void>;
}

export interface JobRunner {
  /** Recovers jobs a stopped process left running, then starts claiming. */
  start(): Promise<void>;
  /** Stops claiming, aborts running jobs and puts them back in the queue, waits for them to wind down. */
  stop(): Promise<void>;
  /** Ids of the jobs running in this process. */
  running(): number[];
}

type StopReason = 'cancel' | 'shutdown';

interface Active {
  job: Job;
  controller: AbortController;
  reason?: StopReason;
  done: Promise<void>;
}

const messageOf = (err: unknown): string => {
  if (err instanceof Error && err.message) return err.message;
  return String(err);
};

type Issue = { path: PropertyKey[]; message: string; code?: string; errors?: Issue[][] };

/** Each issue as "field: message"; a union lists why each of its forms did not fit, joined by "or". */
function describeIssues(issues: readonly Issue[], prefix: PropertyKey[] = []): string {
  return issues
    .map((i) => {
      const path = [...prefix, ...i.path];
      if (i.code === 'invalid_union' && i.errors?.length) return i.errors.map((branch) => describeIssues(branch, path)).join(' or ');
      return `${path.map(String).join('.') || 'job'}: ${i.message}`;
    })
    .join('; ');
}

/** The job's run, codebook and payload against its kind's schema; a job that does not fit fails with the reason. */
export function checkedInput(job: Job) {
  const schema = jobInputs[job.kind as JobKind];
  if (!schema) throw new Error(`no handler for jobs of kind "${job.kind}"`);
  const parsed = schema.safeParse({ runId: job.runId, codebookId: job.codebookId, payload: job.payload });
  if (parsed.success) return parsed.data;
  const where = describeIssues(parsed.error.issues);
  throw new Error(`the ${job.kind} job's input is malformed (${where})`);
}

export function createJobRunner(options: RunnerOptions): JobRunner {
  const { queue, bus, logger } = options;
  const pollMs = options.pollIntervalMs ?? 500;
  const heartbeatMs = options.heartbeatMs ?? 2_000;
  const progressMs = options.progressIntervalMs ?? 500;
  const active = new Map<number, Active>();
  let started = false;
  let stopping = false;
  let claiming = false;
  let pollTimer: NodeJS.Timeout | undefined;
  let heartbeatTimer: NodeJS.Timeout | undefined;
  const unsubscribe: (() => void)[] = [];

  function abort(jobId: number, reason: StopReason) {
    const a = active.get(jobId);
    if (!a || a.controller.signal.aborted) return;
    a.reason = reason;
    a.controller.abort(reason === 'cancel' ? new JobCancelledError(jobId) : new Error('the server is shutting down'));
  }

  function publishState(job: Job, t: Transition, error: string | null) {
    bus.publish({ type: 'state', jobId: job.id, runId: job.runId, teamId: job.teamId, kind: job.kind, state: t.state, error, runState: t.runState });
  }

  /** Bus on every report; the database at most once per progressMs, with the latest report always written last. */
  function progressReporter(job: Job) {
    let lastWrite = 0;
    let pending: JobProgress | null = null;
    let timer: NodeJS.Timeout | undefined;
    let writing: Promise<void> = Promise.resolve();
    const write = () => {
      timer = undefined;
      const p = pending;
      pending = null;
      if (!p) return;
      lastWrite = Date.now();
      writing = writing
        .then(() => queue.progress(job.id, p))
        .catch((err: unknown) => logger.warn({ err, jobId: job.id }, 'progress write failed'));
    };
    return {
      report(p: JobProgress) {
        bus.publish({ type: 'progress', jobId: job.id, runId: job.runId, teamId: job.teamId, kind: job.kind, progress: p });
        pending = p;
        if (timer) return;
        const wait = lastWrite + progressMs - Date.now();
        if (wait <= 0) write();
        else timer = setTimeout(write, wait);
      },
      async flush() {
        clearTimeout(timer);
        write();
        await writing;
      },
      discard() {
        clearTimeout(timer);
        pending = null;
      },
    };
  }

  async function execute(a: Active): Promise<void> {
    const { job, controller } = a;
    const handler = options.handlers[job.kind];
    const reporter = progressReporter(job);
    // Claiming made the run running too (its state follows its jobs).
    bus.publish({ type: 'state', jobId: job.id, runId: job.runId, teamId: job.teamId, kind: job.kind, state: 'running', error: null, runState: job.runId === null ? null : 'running' });
    let outcome: { state: 'succeeded' | 'failed' | 'cancelled' | 'released'; error: string | null };
    try {
      if (!handler) throw new Error(`no handler for jobs of kind "${job.kind}"`);
      const input = checkedInput(job);
      await (handler as JobHandler)(job, { input, signal: controller.signal, progress: (p) => reporter.report(p), deps: options.deps });
      // A handler that ignored its signal still must not turn a cancelled job into a success.
      if (a.reason === 'cancel') throw new JobCancelledError(job.id);
      outcome = { state: 'succeeded', error: null };
    } catch (err) {
      if (a.reason === 'shutdown') outcome = { state: 'released', error: null };
      else if (a.reason === 'cancel' || err instanceof JobCancelledError) outcome = { state: 'cancelled', error: null };
      else outcome = { state: 'failed', error: messageOf(err) };
      if (outcome.state === 'failed') logger.warn({ err, jobId: job.id, kind: job.kind }, 'job failed');
    }
    await reporter.flush();
    if (outcome.state === 'released') {
      reporter.discard();
      await queue.release(job.id);
      logger.info({ jobId: job.id }, 'job returned to the queue for the next start');
      return;
    }
    let t: Transition;
    if (outcome.state === 'succeeded') t = await queue.complete(job.id);
    else if (outcome.state === 'cancelled') t = await queue.cancelled(job.id);
    else t = await queue.fail(job.id, outcome.error ?? 'failed');
    publishState(job, t, outcome.error);
    if (t.state === outcome.state && options.onFinished) {
      await options.onFinished(job, t.state, outcome.error).catch((err: unknown) => logger.warn({ err, jobId: job.id }, 'job notification failed'));
    }
  }

  function launch(job: Job) {
    const a: Active = { job, controller: new AbortController(), done: Promise.resolve() };
    active.set(job.id, a);
    // A cancel that was requested while the job sat in the queue, or between claim and launch.
    if (job.cancelRequested) abort(job.id, 'cancel');
    a.done = execute(a)
      .catch((err: unknown) => logger.error({ err, jobId: job.id }, 'job bookkeeping failed'))
      .finally(() => {
        active.delete(job.id);
        void claimAvailable();
      });
  }

  async function claimAvailable(): Promise<void> {
    if (!started || stopping || claiming) return;
    claiming = true;
    try {
      while (!stopping && active.size < options.concurrency) {
        const job = await queue.claim();
        if (!job) break;
        launch(job);
      }
    } catch (err) {
      logger.warn({ err }, 'claiming a job failed; retrying at the next poll');
    } finally {
      claiming = false;
    }
  }

  async function beat(): Promise<void> {
    const ids = [...active.keys()];
    if (ids.length === 0) return;
    try {
      for (const id of await queue.heartbeat(ids)) abort(id, 'cancel');
    } catch (err) {
      logger.warn({ err }, 'job heartbeat failed');
    }
  }

  return {
    async start() {
      if (started) return;
      const recovered = await queue.recoverInterrupted();
      if (recovered.requeued.length > 0 || recovered.failed.length > 0) logger.info(recovered, 'interrupted jobs recovered');
      started = true;
      stopping = false;
      unsubscribe.push(bus.onCancelRequest((id) => abort(id, 'cancel')));
      unsubscribe.push(bus.onJobQueued(() => void claimAvailable()));
      pollTimer = setInterval(() => void claimAvailable(), pollMs);
      heartbeatTimer = setInterval(() => void beat(), heartbeatMs);
      pollTimer.unref();
      heartbeatTimer.unref();
      await claimAvailable();
    },
    async stop() {
      if (!started) return;
      stopping = true;
      clearInterval(pollTimer);
      clearInterval(heartbeatTimer);
      for (const u of unsubscribe.splice(0)) u();
      for (const id of active.keys()) abort(id, 'shutdown');
      await Promise.all([...active.values()].map((a) => a.done));
      started = false;
    },
    running: () => [...active.keys()],
  };
}
