import type { JobState } from '../contracts';
import type { Repositories } from '../db';

/**
 * What the jobs of a run say the run is: a failure or cancellation wins, then activity, then success. A run is
 * finished only once its results are measured: the evaluate job its train job enqueues.
 */
export function runStateOf(jobs: { state: JobState; kind: string }[]): JobState {
  if (jobs.some((j) => j.state === 'failed')) return 'failed';
  if (jobs.some((j) => j.state === 'cancelled')) return 'cancelled';
  if (jobs.some((j) => j.state === 'running')) return 'running';
  if (jobs.some((j) => j.state === 'queued')) return jobs.some((j) => j.state === 'succeeded') ? 'running' : 'queued';
  return jobs.some((j) => j.kind === 'evaluate') ? 'succeeded' : 'running';
}

const terminal = (state: JobState) => state === 'succeeded' || state === 'failed' || state === 'cancelled';

/** Re-derives the run's state from its jobs and writes it; call it in the transaction that changed a job. */
export async function refreshRunState(tx: Repositories, runId: number): Promise<JobState> {
  const jobs = await tx.runs.jobStates(runId);
  const state = runStateOf(jobs);
  const error = state === 'failed' ? (jobs.find((j) => j.state === 'failed')?.error ?? 'a job failed') : null;
  await tx.runs.writeState(runId, { state, error, finished: terminal(state) });
  return state;
}
