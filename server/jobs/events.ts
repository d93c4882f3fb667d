import { EventEmitter } from 'node:events';
import type { JobKind, JobProgress, JobState } from '../contracts';

export type JobEvent =
  | { type: 'progress'; jobId: number; runId: number | null; teamId: number; kind: JobKind; progress: JobProgress }
  | {
      type: 'state';
      jobId: number;
      runId: number | null;
      teamId: number;
      kind: JobKind;
      state: JobState;
      error: string | null;
      /** The run's state after this change (null for a job without a run). */
      runState: JobState | null;
    };

/**
 * In-process publish/subscribe for job events: every progress report (the database only gets a throttled
 * copy), every state change, cancellation requests and "a job was queued" wake-ups for the runner.
 * Listeners are called synchronously and must not throw; each subscription returns its own unsubscribe.
 */
export interface JobEventBus {
  publish(event: JobEvent): void;
  subscribeRun(runId: number, listener: (event: JobEvent) => void): () => void;
  subscribeAll(listener: (event: JobEvent) => void): () => void;
  requestCancel(jobId: number): void;
  onCancelRequest(listener: (jobId: number) => void): () => void;
  jobQueued(): void;
  onJobQueued(listener: () => void): () => void;
  /** Subscriptions currently open (tests check that closed streams leave none behind). */
  listenerCount(): number;
}

export function createJobEventBus(): JobEventBus {
  const emitter = new EventEmitter();
  // One listener per open event stream; the default cap of 10 would warn on an ordinary busy day.
  emitter.setMaxListeners(0);
  const on = <A extends unknown[]>(name: string, listener: (...args: A) => void) => {
    emitter.on(name, listener as (...args: unknown[]) => void);
    return () => void emitter.off(name, listener as (...args: unknown[]) => void);
  };
  return {
    publish(event) {
      if (event.runId !== null) emitter.emit(`run:${event.runId}`, event);
      emitter.emit('job', event);
    },
    subscribeRun: (runId, listener) => on(`run:${runId}`, listener),
    subscribeAll: (listener) => on('job', listener),
    requestCancel: (jobId) => void emitter.emit('cancel', jobId),
    onCancelRequest: (listener) => on('cancel', listener),
    jobQueued: () => void emitter.emit('queued'),
    onJobQueued: (listener) => on('queued', listener),
    listenerCount() {
      return emitter.eventNames().reduce((n, name) => (name === 'cancel' || name === 'queued' ? n : n + emitter.listenerCount(name)), 0);
    },
  };
}
