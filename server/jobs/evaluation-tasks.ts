import type { EvaluationTaskRunner } from '../services/task-codebook';
import type { TaskPool } from './pool';

const evaluateTask = new URL('./tasks/evaluate.task.ts', import.meta.url).href;

/** Evaluation work on a pool thread: decoding, coding and SSIM are plain JavaScript and would block the event loop. */
export function evaluationTaskRunner(pool: TaskPool): EvaluationTaskRunner {
  return (task, signal) => pool.run(evaluateTask, task, { signal });
}
