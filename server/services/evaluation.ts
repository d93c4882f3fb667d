import type { Database } from '../db';
import { curveCsv, metricsCsv, type CsvFile } from './evaluation-csv';
import { createEvaluationBatches } from './evaluation-batches';
import { createEvaluationRequests } from './evaluation-requests';
import { createEvaluationResults } from './evaluation-results';

export interface EvaluationDeps {
  db: Database;
  /** Wakes the job runner after a job was queued (it also polls). */
  jobQueued?: () => void;
  /** Tells the runner holding a job that its cancellation was asked for (the job event bus). */
  requestCancel?: (jobId: number) => void;
}

/**
 * What the evaluation routes call: result reads (evaluation-results.ts), their CSV form (evaluation-csv.ts),
 * queueing (evaluation-requests.ts) and batches (evaluation-batches.ts). The measuring itself is the evaluate job's (server/jobs/handlers/evaluate.ts).
 */
export function createEvaluationService(deps: EvaluationDeps) {
  const results = createEvaluationResults(deps);
  const requests = createEvaluationRequests(deps);
  const batches = createEvaluationBatches(deps);
  return {
    ...results,
    ...requests,
    ...batches,
    curveCsv: async (teamId: number, runId: number): Promise<CsvFile> => curveCsv(await results.curve(teamId, runId)),
    metricsCsv: async (teamId: number, runId: number): Promise<CsvFile> => metricsCsv(await results.metrics(teamId, runId)),
  };
}

export type EvaluationService = ReturnType<typeof createEvaluationService>;
