import os from 'node:os';

/** Threads granted to one caller; give them back with release() (idempotent). */
export interface ThreadLease {
  readonly threads: number;
  release(): void;
}

interface Waiter {
  want: number;
  resolve: (lease: ThreadLease) => void;
  reject: (err: unknown) => void;
  signal?: AbortSignal;
  onAbort?: () => void;
}

/**
 * Counts the compute threads of one process. Every engine call that runs kernels holds a
 * lease, so concurrent jobs share the cores instead of each spawning one thread per core.
 * A request waits until at least one thread is free and then gets min(wanted, free);
 * waiters are served first come, first served.
 */
export class ThreadBudget {
  private totalThreads: number;
  private inUse = 0;
  private readonly queue: Waiter[] = [];

  constructor(total: number = os.availableParallelism()) {
    this.totalThreads = checkCount(total);
  }

  get total(): number {
    return this.totalThreads;
  }

  get available(): number {
    return Math.max(0, this.totalThreads - this.inUse);
  }

  /** Changes the size; leases already granted keep their threads until released. */
  configure(total: number): void {
    this.totalThreads = checkCount(total);
    this.drain();
  }

  acquire(wanted: number = this.totalThreads, signal?: AbortSignal): Promise<ThreadLease> {
    const want = Math.max(1, Math.min(Math.floor(wanted), this.totalThreads));
    if (!Number.isFinite(want)) return Promise.reject(new RangeError('threads must be a number'));
    if (signal?.aborted) return Promise.reject(signal.reason);
    return new Promise((resolve, reject) => {
      const waiter: Waiter = { want, resolve, reject, signal };
      if (signal) {
        waiter.onAbort = () => {
          const i = this.queue.indexOf(waiter);
          if (i >= 0) this.queue.splice(i, 1);
          reject(signal.reason);
        };
        signal.addEventListener('abort', waiter.onAbort, { once: true });
      }
      this.queue.push(waiter);
      this.drain();
    });
  }

  private drain(): void {
    while (this.queue.length > 0 && this.available > 0) {
      const waiter = this.queue.shift()!;
      if (waiter.onAbort) waiter.signal!.removeEventListener('abort', waiter.onAbort);
      const threads = Math.min(waiter.want, this.available);
      this.inUse += threads;
      let released = false;
      waiter.resolve({
        threads,
        release: () => {
          if (released) return;
          released = true;
          this.inUse -= threads;
          this.drain();
        },
      });
    }
  }
}

function checkCount(total: number): number {
  if (!Number.isInteger(total) || total < 1) {
    throw new RangeError(`thread budget must be a positive integer, got ${total}`);
  }
  return total;
}

/** The one budget of this process, sized to the cores; configure() it from ENGINE_THREADS. */
export const threadBudget = new ThreadBudget();
