import type { ModelTaskRunner } from '../services/codebook-model';
import type { TaskPool } from './pool';

const modelTask = new URL('./tasks/model.task.ts', import.meta.url).href;

/** Anomaly scores and denoising on a pool thread: every patch is scored against every codeword in plain JavaScript. */
export function modelTaskRunner(pool: TaskPool): ModelTaskRunner {
  return (task, signal) => pool.run(modelTask, task, { signal });
}
