// Plain-JavaScript entry of every pool thread. A worker thread does not reliably inherit the parent's
// TypeScript loader (test runners start node without it), so it registers tsx itself, then runs the
// `*.task.ts` module named by each task, loaded once per thread.
import { setTimeout as sleep } from 'node:timers/promises';
import { register } from 'tsx/esm/api';

register();
const modules = new Map();

const MiB = 1024 * 1024;
/** How often the watchdog measures the thread's typed arrays. */
const WATCH_EVERY_MS = 100;
/**
 * Room for this task's own typed arrays that are garbage but not yet collected: V8 collects ArrayBuffer memory
 * once it has grown by about 64 MiB since the last collection, and at once at about twice that (V8's external
 * memory limits, from memory). Without it the watchdog could stop a task that holds no more than its budget.
 */
const UNCOLLECTED_SLACK_BYTES = 128 * MiB;

/**
 * The backstop behind the engine's MemoryBudget (which tasks charge before each large allocation): while a task
 * runs, the ArrayBuffer memory of this thread (process.memoryUsage().arrayBuffers is per thread in a worker) may not
 * grow past the limit, plus the slack, over what it was when the task started (what earlier tasks left for the
 * collector is not this task's). A timer cannot interrupt synchronous code, so this catches allocations made
 * across awaits; the error it throws kills the thread, and the pool fails the task with its message.
 */
function watchTypedArrays(limitBytes) {
  if (!limitBytes) return () => undefined;
  const baseline = process.memoryUsage().arrayBuffers;
  const timer = setInterval(() => {
    const grown = process.memoryUsage().arrayBuffers - baseline;
    if (grown <= limitBytes + UNCOLLECTED_SLACK_BYTES) return;
    clearInterval(timer);
    const mib = (b) => `${Math.round(b / MiB)} MiB`;
    throw new Error(
      `the job task ran out of memory: it holds ${mib(grown)} of typed arrays, more than its limit of ${mib(limitBytes)} (JOB_TASK_MAX_HEAP_MB)`,
    );
  }, WATCH_EVERY_MS);
  return () => clearInterval(timer);
}

/**
 * @param {{ task: string, input: unknown, memoryLimitBytes?: number | null }} message
 *   memoryLimitBytes: what the task may hold in typed arrays (JOB_TASK_MAX_HEAP_MB), passed on to the task
 */
export default async function runTask({ task, input, memoryLimitBytes = null }) {
  // TEST-ONLY: CELLWRIGHT_TEST_TASK_FAULT=oom makes every task allocate until its thread's heap is exhausted
  // (with a small JOB_TASK_MAX_HEAP_MB, that takes milliseconds). Never set it in production.
  if (process.env.CELLWRIGHT_TEST_TASK_FAULT === 'oom') {
    const hog = [];
    for (;;) hog.push(Array.from({ length: 1e5 }, (_, i) => ({ i })));
  }
  let run = modules.get(task);
  if (!run) {
    const mod = await import(task);
    if (typeof mod.default !== 'function') throw new Error(`${task} has no default export to run`);
    run = mod.default;
    modules.set(task, run);
  }
  const stopWatching = watchTypedArrays(memoryLimitBytes);
  try {
    // TEST-ONLY: CELLWRIGHT_TEST_TASK_FAULT=typed-arrays makes every task fill Float32Arrays that no budget is
    // charged for, 4 MiB every few milliseconds, until the watchdog stops it. Never set it in production.
    if (process.env.CELLWRIGHT_TEST_TASK_FAULT === 'typed-arrays') {
      const hog = [];
      for (;;) {
        hog.push(new Float32Array(MiB).fill(1));
        await sleep(5);
      }
    }
    return await run(input, { memoryLimitBytes });
  } finally {
    stopWatching();
  }
}
