import { createEvaluationService, type EvaluationTaskRunner } from '../../services/evaluation';
import type { TaskPool } from '../pool';
import type { JobHandler } from '../types';

const evaluateTask = new URL('../tasks/evaluate.task.ts', import.meta.url).href;

/** Evaluation work on a pool thread: decoding, coding and SSIM are plain JavaScript and would block the event loop. */
export function evaluationTaskRunner(pool: TaskPool): EvaluationTaskRunner {
  return (task, signal) => pool.run(evaluateTask, task, { signal });
}

/**
 * Measures every codebook of the job's run on the run's held-out images (or one codebook on the list in the job's
 * payload), fills the reference codec cache for that list, and commits the results with the job's success.
 */
export const evaluateHandler: JobHandler = async (job, ctx) => {
  const { db, store, pool, queue } = ctx.deps;
  const evaluation = createEvaluationService({ db, store, runTask: evaluationTaskRunner(pool) });
  await evaluation.runJob(job, {
    signal: ctx.signal,
    progress: ctx.progress,
    commit: async (work) => {
      await queue.completeWith(job.id, work);
    },
  });
};
