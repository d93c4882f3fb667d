import type { CodebookWithCodewords } from '../db/repositories/codebooks';
import type { EvaluateTask, TaskCodebook } from '../jobs/tasks/evaluate.task';

/** Runs one evaluation task off the request loop (a task pool); aborting the signal abandons the task. */
export type EvaluationTaskRunner = (task: EvaluateTask, signal?: AbortSignal) => Promise<unknown>;

/** A stored codebook as the evaluation tasks take it. */
export function toTaskCodebook(c: CodebookWithCodewords): TaskCodebook {
  const meta = c.metadata as { training?: TaskCodebook['training']; preprocessing?: TaskCodebook['preprocessing']; structure?: TaskCodebook['structure'] };
  return {
    size: c.size,
    dimension: c.dimension,
    patch: { width: c.patch.width, height: c.patch.height, channels: c.channels, color: c.color },
    preprocessing: meta.preprocessing ?? (c.meanBits > 0 ? { kind: 'mean-removed', meanBits: c.meanBits } : { kind: 'none' }),
    codewords: c.codewords,
    usage: c.usage,
    training: meta.training as TaskCodebook['training'],
    ...(meta.structure ? { structure: meta.structure } : {}),
    checksum: c.checksum,
  };
}
