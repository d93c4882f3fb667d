// Plain-JavaScript bootstrap of the kernel worker. A worker thread does not reliably
// inherit the parent's TypeScript loader (Node 20 ignores --import in worker execArgv,
// and test runners start node without it), so the worker registers tsx itself and then
// loads the TypeScript task.
import { register } from 'tsx/esm/api';

register();
await import('./assign.task.ts');
