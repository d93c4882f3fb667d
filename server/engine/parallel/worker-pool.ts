import { Worker } from 'node:worker_threads';
import type { AssignReply, WorkerJob } from './messages';

/**
 * Long-lived kernel workers, created on first use. Idle workers are unref'd so that a
 * process whose work is done exits without calling shutdownEngineWorkers(); a worker
 * running a job is ref'd so the process waits for it.
 */
export class KernelWorker {
  readonly worker: Worker;
  private busy = false;
  private pending?: { resolve: (r: AssignReply) => void; reject: (e: Error) => void };

  constructor() {
    // The bootstrap loads the TypeScript task through tsx whatever flags the parent had.
    this.worker = new Worker(new URL('./assign-worker.mjs', import.meta.url), { execArgv: [] });
    this.worker.unref();
    this.worker.on('message', (reply: AssignReply) => this.settle(reply));
    this.worker.on('error', (err) => this.fail(err));
    this.worker.on('exit', (code) => {
      pool.forget(this);
      this.fail(new Error(`engine worker exited with code ${code}`));
    });
  }

  get isBusy(): boolean {
    return this.busy;
  }

  run(job: WorkerJob): Promise<AssignReply> {
    if (this.busy) throw new Error('engine worker is already running a job');
    this.busy = true;
    this.worker.ref();
    return new Promise((resolve, reject) => {
      this.pending = { resolve, reject };
      this.worker.postMessage(job);
    });
  }

  private settle(reply: AssignReply): void {
    const p = this.pending;
    this.pending = undefined;
    this.busy = false;
    this.worker.unref();
    if (!p) return;
    if (reply.error) p.reject(new Error(`engine worker failed: ${reply.error}`));
    else p.resolve(reply);
  }

  private fail(err: Error): void {
    const p = this.pending;
    this.pending = undefined;
    this.busy = false;
    p?.reject(err);
  }
}

class WorkerPool {
  private readonly workers: KernelWorker[] = [];
  private readonly reserved = new Set<KernelWorker>();

  /** Reserves n workers for one caller (the thread budget guarantees they exist). */
  take(n: number): KernelWorker[] {
    const out: KernelWorker[] = [];
    for (const w of this.workers) {
      if (out.length === n) break;
      if (!this.reserved.has(w)) out.push(w);
    }
    while (out.length < n) {
      const w = new KernelWorker();
      this.workers.push(w);
      out.push(w);
    }
    for (const w of out) this.reserved.add(w);
    return out;
  }

  prestart(count: number): void {
    while (this.workers.length < count) this.workers.push(new KernelWorker());
  }

  give(workers: KernelWorker[]): void {
    for (const w of workers) this.reserved.delete(w);
  }

  forget(w: KernelWorker): void {
    const i = this.workers.indexOf(w);
    if (i >= 0) this.workers.splice(i, 1);
    this.reserved.delete(w);
  }

  /** Workers currently executing a job (tests check that cancellation leaves none). */
  busyCount(): number {
    return this.workers.filter((w) => w.isBusy).length;
  }

  size(): number {
    return this.workers.length;
  }

  async shutdown(): Promise<void> {
    const all = this.workers.splice(0);
    this.reserved.clear();
    await Promise.all(all.map((w) => w.worker.terminate()));
  }
}

export const pool = new WorkerPool();

/**
 * Starts kernel workers until the pool holds `count` (idle, so they do not keep the process alive). A command-line
 * process calls this first, so that the threads load their code while it reads its inputs.
 */
export function prestartEngineWorkers(count: number): void {
  pool.prestart(count);
}

/** Terminates every engine worker; the next engine call starts new ones. */
export function shutdownEngineWorkers(): Promise<void> {
  return pool.shutdown();
}

export function engineWorkerStats(): { workers: number; busy: number } {
  return { workers: pool.size(), busy: pool.busyCount() };
}
