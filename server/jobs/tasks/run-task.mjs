// Plain-JavaScript entry of every pool thread. A worker thread does not reliably inherit the parent's
// TypeScript loader (test runners start node without it), so it registers tsx itself, then runs the
// `*.task.ts` module named by each task, loaded once per thread.
import { register } from 'tsx/esm/api';

register();
const modules = new Map();

export default async function runTask({ task, input }) {
  let run = modules.get(task);
  if (!run) {
    const mod = await import(task);
    if (typeof mod.default !== 'function') throw new Error(`${task} has no default export to run`);
    run = mod.default;
    modules.set(task, run);
  }
  return run(input);
}
