import { MemoryBudget } from '../../engine';

/** What the pool's bootstrap (run-task.mjs) hands every task besides its input. */
export interface TaskContext {
  /** The most the task may hold in typed arrays (JOB_TASK_MAX_HEAP_MB in bytes); null for no limit. */
  memoryLimitBytes: number | null;
}

/**
 * The task's memory budget: the pool thread's heap limit does not cover typed arrays, so every large one the task
 * makes (decoded images, vectors) is charged here first, and one past the limit fails the task with the figures.
 */
export function taskMemory(context: TaskContext | undefined): MemoryBudget {
  return new MemoryBudget(context?.memoryLimitBytes ?? Infinity, 'this job task (JOB_TASK_MAX_HEAP_MB)');
}
