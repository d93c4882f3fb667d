import { useQuery, useQueryClient } from '@tanstack/react-query';
import { useCallback, useRef, useState } from 'react';
import type { ModelJobLookup, ModelJobView } from '../../../../server/contracts';
import { cancelModelJob } from '../api/cancel-model-job';
import { useModelJobStatus } from '../api/get-model-job';
import { codebookKeys } from '../api/keys';

export interface ModelJob {
  /** The job as last read; undefined while none is known for the request. */
  view: ModelJobView | undefined;
  /** Why it could not be found, queued or read, or why it failed. */
  error: unknown;
  /** No earlier job of this request exists and none was asked for: the page offers to compute it. */
  idle: boolean;
  /** Looking for an earlier job of this request. */
  looking: boolean;
  /** Queues the job (the Compute button, and again after a failure or a cancellation). */
  compute(): void;
  cancel(): void;
}

/**
 * Follows one model job per distinct request, and starts one only when asked. Opening a page queues nothing: `find`
 * looks for a job the same request queued before (results are deterministic for their request, so a stored one is
 * shown as it is, or followed while it runs); without one the request is idle until `compute` queues it with `start`.
 */
export function useModelJob(
  teamId: number, request: string, find: () => Promise<ModelJobLookup>, start: () => Promise<ModelJobView>, enabled = true,
): ModelJob {
  const queryClient = useQueryClient();
  const [jobs, setJobs] = useState<Record<string, number>>({});
  const [failure, setFailure] = useState<{ request: string; error: unknown } | null>(null);
  const [starting, setStarting] = useState<string | null>(null);
  const startRef = useRef(start);
  startRef.current = start;
  const findRef = useRef(find);
  findRef.current = find;

  const found = useQuery({
    queryKey: codebookKeys.modelJobFound(teamId, request),
    queryFn: async () => {
      const { job } = await findRef.current();
      if (job) queryClient.setQueryData(codebookKeys.modelJob(teamId, job.job.id), job);
      return job?.job.id ?? null;
    },
    enabled,
  });
  const jobId = jobs[request] ?? found.data ?? null;

  // The requests being queued: a second press before the first answer queues nothing more.
  const inFlight = useRef(new Set<string>());
  const compute = useCallback(() => {
    if (inFlight.current.has(request)) return;
    inFlight.current.add(request);
    setStarting(request);
    setFailure(null);
    startRef.current().then(
      (view) => {
        queryClient.setQueryData(codebookKeys.modelJob(teamId, view.job.id), view);
        setJobs((all) => ({ ...all, [request]: view.job.id }));
      },
      (error: unknown) => setFailure({ request, error }),
    ).finally(() => {
      inFlight.current.delete(request);
      setStarting((s) => (s === request ? null : s));
    });
  }, [queryClient, request, teamId]);

  const status = useModelJobStatus(teamId, jobId);
  const view = jobId === null ? undefined : status.data;
  const failed = view?.job.state === 'failed' ? new Error(view.job.error ?? 'The job failed') : null;
  return {
    view,
    error: (failure?.request === request ? failure.error : null) ?? found.error ?? status.error ?? failed,
    idle: enabled && found.isSuccess && jobId === null && starting !== request,
    looking: enabled && found.isPending,
    compute,
    cancel: () => {
      if (jobId === null) return;
      void cancelModelJob(teamId, jobId).then((v) => queryClient.setQueryData(codebookKeys.modelJob(teamId, jobId), v), () => undefined);
    },
  };
}
