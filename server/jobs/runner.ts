import { randomUUID } from 'node:crypto';
import type { Logger } from '../config';
import { jobInputs, type JobKind, type JobProgress, type JobState } from '../contracts';
import type { ComputeWorker } from './compute/worker';
import type { JobDispatch } from './dispatch';
import type { JobEvent, JobEventBus } from './events';
import { JobCancelledError, LeaseLostError, type Job, type JobStore, type Transition } from './queue';
import type { JobDeps, JobHandler, JobHandlers } from './types';

export interface RunnerOptions {
  store: JobStore;
  /** Makes this process's connection to the job engine (BullMQ on Redis); called by start(), closed by stop(). */
  dispatch: () => JobDispatch;
  bus: JobEventBus;
  handlers: JobHandlers;
  deps: JobDeps;
  logger: Logger;
  /** How often running jobs are marked alive and checked for cancellation or a lost lease. */
  heartbeatMs?: number;
  /** Least time between two progress writes of one job (the bus gets every report). */
  progressIntervalMs?: number;
  /** How often the rows still to be done are checked against what the queue holds (JOB_RECONCILE_MS). */
  reconcileMs?: number;
  /** This process's own compute worker, started and stopped with the runner (none: only workers that joined compute). */
  localWorker?: () => ComputeWorker;
  /** Called after a job reached a terminal state; failures are logged, never rethrown. */
  onFinished?: (job: Job, state: JobState, error: string | null) => Promise<void>;
}

export interface JobRunner {
  /** Connects to the job engine, puts back what it lost, and starts taking jobs. */
  start(): Promise<void>;
  /** Stops taking jobs, aborts the running ones and hands them back to the queue, waits for them to wind down. */
  stop(): Promise<void>;
  /** Ids of the jobs running in this process. */
  running(): number[];
  /** Checks the rows still to be done against the queue now; resolves with the ids it had to add. */
  reconcile(): Promise<number[]>;
  /** Jobs waiting, active and delayed in the queue (null while the runner is stopped). */
  depth(): Promise<{ waiting: number; active: number; delayed: number } | null>;
}

type StopReason = 'cancel' | 'shutdown' | 'lost';

interface Active {
  job: Job;
  lease: string;
  controller: AbortController;
  reason?: StopReason;
  done: Promise<Outcome>;
}

type Outcome = 'finished' | 'released' | 'lost';

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

/** Channels every process of one studio shares: cancellations and job events (progress and state). */
const CANCEL = 'cancel';
const EVENTS = 'events';

/**
 * Runs jobs the job engine delivers. Every process of a studio (several servers on one database) runs one; the
 * queue gives each job to one of them at a time, the job's row says what it is and where it stands, and each
 * attempt writes under its own lease. Events and cancellations reach every process over Redis, so a progress
 * stream open on one server follows a job running on another.
 */
export function createJobRunner(options: RunnerOptions): JobRunner {
  const { store, bus, logger } = options;
  const heartbeatMs = options.heartbeatMs ?? 2_000;
  const progressMs = options.progressIntervalMs ?? 500;
  const reconcileMs = options.reconcileMs ?? 10_000;
  const origin = randomUUID();
  const active = new Map<number, Active>();
  let dispatch: JobDispatch | undefined;
  let worker: ComputeWorker | undefined;
  let stopping = false;
  let heartbeatTimer: NodeJS.Timeout | undefined;
  let reconcileTimer: NodeJS.Timeout | undefined;
  let reconciling: Promise<number[]> | null = null;
  let reconcileAgain = false;
  const unsubscribe: (() => void)[] = [];

  function abort(jobId: number, reason: StopReason) {
    const a = active.get(jobId);
    if (!a || a.controller.signal.aborted) return;
    a.reason = reason;
    const why = reason === 'cancel' ? new JobCancelledError(jobId) : reason === 'lost' ? new LeaseLostError(jobId) : new Error('the server is shutting down');
    a.controller.abort(why);
  }

  /** On this process's bus, and to the other processes of the studio. */
  function emit(event: JobEvent) {
    bus.publish(event);
    dispatch?.publish(EVENTS, JSON.stringify({ origin, event })).catch((err: unknown) => logger.warn({ err }, 'job event not shared'));
  }

  function publishState(job: Job, t: Transition, error: string | null) {
    emit({ type: 'state', jobId: job.id, runId: job.runId, teamId: job.teamId, kind: job.kind, state: t.state, error, runState: t.runState });
  }

  /** Bus on every report; the database at most once per progressMs, with the latest report always written last. */
  function progressReporter(job: Job, lease: string) {
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
        .then(() => store.progress(job.id, lease, p))
        .catch((err: unknown) => logger.warn({ err, jobId: job.id }, 'progress write failed'));
    };
    return {
      report(p: JobProgress) {
        emit({ type: 'progress', jobId: job.id, runId: job.runId, teamId: job.teamId, kind: job.kind, progress: p });
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

  async function notify(job: Job, state: JobState, error: string | null) {
    if (!options.onFinished) return;
    await options.onFinished(job, state, error).catch((err: unknown) => logger.warn({ err, jobId: job.id }, 'job notification failed'));
  }

  async function execute(a: Active): Promise<Outcome> {
    const { job, lease, controller } = a;
    const handler = options.handlers[job.kind];
    const reporter = progressReporter(job, lease);
    // Taking the job made its run running too (its state follows its jobs).
    emit({ type: 'state', jobId: job.id, runId: job.runId, teamId: job.teamId, kind: job.kind, state: 'running', error: null, runState: job.runId === null ? null : 'running' });
    let outcome: { state: 'succeeded' | 'failed' | 'cancelled' | 'released' | 'lost'; error: string | null };
    try {
      if (!handler) throw new Error(`no handler for jobs of kind "${job.kind}"`);
      const input = checkedInput(job);
      await (handler as JobHandler)(job, {
        input,
        signal: controller.signal,
        progress: (p) => reporter.report(p),
        complete: async (work) => {
          await store.completeWith(job.id, lease, work);
          // Jobs queued in that transaction (a train job's evaluation) go to the queue now that they exist.
          scheduleReconcile();
        },
        deps: options.deps,
      });
      // A handler that ignored its signal still must not turn a cancelled job into a success.
      if (a.reason === 'cancel') throw new JobCancelledError(job.id);
      outcome = { state: 'succeeded', error: null };
    } catch (err) {
      if (a.reason === 'shutdown') outcome = { state: 'released', error: null };
      else if (a.reason === 'lost' || err instanceof LeaseLostError) outcome = { state: 'lost', error: null };
      else if (a.reason === 'cancel' || err instanceof JobCancelledError) outcome = { state: 'cancelled', error: null };
      else outcome = { state: 'failed', error: messageOf(err) };
      if (outcome.state === 'failed') logger.warn({ err, jobId: job.id, kind: job.kind }, 'job failed');
    }
    await reporter.flush();
    if (outcome.state === 'released') {
      reporter.discard();
      await store.release(job.id, lease);
      logger.info({ jobId: job.id }, 'job handed back to the queue');
      return 'released';
    }
    if (outcome.state === 'lost') {
      logger.warn({ jobId: job.id }, 'job is held by another attempt now; this attempt stops without writing');
      return 'lost';
    }
    let t: Transition;
    if (outcome.state === 'succeeded') t = await store.complete(job.id, lease);
    else if (outcome.state === 'cancelled') t = await store.cancelled(job.id, lease);
    else t = await store.fail(job.id, lease, outcome.error ?? 'failed');
    if (!t.changed && t.state === 'running') return 'lost';
    publishState(job, t, outcome.error);
    if (t.state === outcome.state) await notify(job, t.state, outcome.error);
    return 'finished';
  }

  /** One delivery from the queue: take the job's row, run it, and acknowledge (or hand it back). */
  async function deliver(jobId: number, delivery: { release(): Promise<never> }): Promise<void> {
    // A second delivery of a job this process is running (the queue lost track of it): the first one answers.
    const running = active.get(jobId);
    if (running) {
      if ((await running.done) === 'released') await delivery.release();
      return;
    }
    if (stopping) await delivery.release();
    const taken = await store.take(jobId);
    if (taken.kind === 'none') return;
    if (taken.kind === 'ended') {
      publishState(taken.job, taken.transition, taken.error);
      if (taken.transition.state === 'failed') await notify(taken.job, 'failed', taken.error);
      return;
    }
    logger.info({ jobId, kind: taken.job.kind, attempt: taken.job.attempts }, 'job taken');
    const a: Active = { job: taken.job, lease: taken.lease, controller: new AbortController(), done: Promise.resolve('finished') };
    active.set(jobId, a);
    if (taken.job.cancelRequested || stopping) abort(jobId, stopping ? 'shutdown' : 'cancel');
    a.done = execute(a).catch((err: unknown) => {
      logger.error({ err, jobId }, 'job bookkeeping failed');
      return 'lost' as const;
    });
    const outcome = await a.done;
    active.delete(jobId);
    if (outcome === 'released') await delivery.release();
  }

  async function beat(): Promise<void> {
    const leases = [...active.values()].map((a) => ({ id: a.job.id, lease: a.lease }));
    if (leases.length === 0) return;
    try {
      const { cancel, lost } = await store.heartbeat(leases);
      for (const id of cancel) abort(id, 'cancel');
      for (const id of lost) abort(id, 'lost');
    } catch (err) {
      logger.warn({ err }, 'job heartbeat failed');
    }
  }

  function reconcile(): Promise<number[]> {
    if (!dispatch) return Promise.resolve([]);
    if (reconciling) {
      reconcileAgain = true;
      return reconciling;
    }
    const d = dispatch;
    reconciling = (async () => {
      const added: number[] = [];
      do {
        reconcileAgain = false;
        added.push(...(await d.ensure(await store.pendingIds())));
      } while (reconcileAgain);
      return added;
    })().finally(() => {
      reconciling = null;
    });
    return reconciling;
  }

  function scheduleReconcile() {
    reconcile().catch((err: unknown) => logger.warn({ err }, 'jobs not handed to the queue yet; the next pass retries'));
  }

  return {
    async start() {
      if (dispatch) return;
      stopping = false;
      const d = options.dispatch();
      dispatch = d;
      await d.subscribe(CANCEL, (message) => abort(Number(message), 'cancel'));
      await d.subscribe(EVENTS, (message) => {
        const { origin: from, event } = JSON.parse(message) as { origin: string; event: JobEvent };
        if (from !== origin) bus.publish(event);
      });
      unsubscribe.push(
        bus.onCancelRequest((id) => {
          abort(id, 'cancel');
          d.publish(CANCEL, String(id)).catch((err: unknown) => logger.warn({ err, jobId: id }, 'cancellation not shared; heartbeats still carry it'));
        }),
      );
      unsubscribe.push(bus.onJobQueued(() => scheduleReconcile()));
      worker = options.localWorker?.();
      await worker?.start();
      const added = await reconcile();
      if (added.length > 0) logger.info({ jobs: added }, 'jobs the queue did not hold were handed to it again');
      await d.start(deliver);
      heartbeatTimer = setInterval(() => void beat(), heartbeatMs);
      reconcileTimer = setInterval(() => {
        reconcile()
          .then((again) => again.length > 0 && logger.info({ jobs: again }, 'jobs the queue had lost were handed to it again'))
          .catch((err: unknown) => logger.warn({ err }, 'reconciling jobs with the queue failed'));
      }, reconcileMs);
      heartbeatTimer.unref();
      reconcileTimer.unref();
    },
    async stop() {
      const d = dispatch;
      if (!d) return;
      stopping = true;
      clearInterval(heartbeatTimer);
      clearInterval(reconcileTimer);
      for (const u of unsubscribe.splice(0)) u();
      for (const id of active.keys()) abort(id, 'shutdown');
      await Promise.all([...active.values()].map((a) => a.done));
      await reconciling?.catch(() => undefined);
      await worker?.stop();
      worker = undefined;
      await d.stop();
      dispatch = undefined;
    },
    running: () => [...active.keys()],
    reconcile,
    depth: async () => (dispatch ? dispatch.depth() : null),
  };
}
