// Plain-JavaScript entry of every pool thread. A worker thread does not reliably inherit the parent's
// TypeScript loader (test runners start node without it), so it registers tsx itself, then runs the
// `*.task.ts` module named by each task, loaded once per thread.
import { register } from 'tsx/esm/api';

register();
const modules = new Map();

export default async function runTask({ task, input }) {
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
  return run(input);
}
