import { Piscina } from 'piscina';

/** Worker-thread pool for the CPU-heavy parts of jobs that are not engine kernels (decoding, evaluation). */
export interface TaskPool {
  /**
   * Runs the default export of a `*.task.ts` module on a pool thread.
   * @param task  file URL of the task module (`new URL('./tasks/x.task.ts', import.meta.url).href`)
   */
  run<I, O>(task: string, input: I, options?: { signal?: AbortSignal }): Promise<O>;
  destroy(): Promise<void>;
}

const bootstrap = new URL('./tasks/run-task.mjs', import.meta.url).href;

/**
 * maxThreads = JOB_CONCURRENCY: each running job uses at most one pool thread at a time, so the pool never
 * adds more threads than there are jobs; the engine's own kernels draw on its shared thread budget.
 * maxHeapMb bounds each thread's JavaScript heap (resourceLimits) and, since that limit does not cover typed
 * arrays, is also each task's typed-array budget: tasks charge their large allocations to it (tasks/task-context.ts)
 * and a watchdog in the bootstrap (tasks/run-task.mjs) stops a thread whose typed arrays grow past it regardless.
 */
export function createTaskPool(options: { maxThreads: number; maxHeapMb?: number; idleTimeoutMs?: number }): TaskPool {
  const memoryLimitBytes = options.maxHeapMb ? options.maxHeapMb * 1024 * 1024 : null;
  const piscina = new Piscina({
    filename: bootstrap,
    minThreads: 0,
    maxThreads: options.maxThreads,
    idleTimeout: options.idleTimeoutMs ?? 30_000,
    // The bootstrap registers the TypeScript loader itself; inherited loader flags are not needed.
    execArgv: [],
    // A thread that outgrows its heap dies alone: its task rejects, its job fails, the server keeps serving.
    ...(options.maxHeapMb ? { resourceLimits: { maxOldGenerationSizeMb: options.maxHeapMb } } : {}),
  });
  return {
    run<I, O>(task: string, input: I, runOptions: { signal?: AbortSignal } = {}) {
      return piscina.run({ task, input, memoryLimitBytes }, { signal: runOptions.signal ?? null }) as Promise<O>;
    },
    async destroy() {
      await piscina.destroy();
    },
  };
}
