import { useQueryClient } from '@tanstack/react-query';
import { useCallback, useEffect, useRef, useState } from 'react';
import type { ModelJobView } from '../../../../server/contracts';
import { cancelModelJob } from '../api/cancel-model-job';
import { useModelJobStatus } from '../api/get-model-job';
import { codebookKeys } from '../api/keys';

export interface ModelJob {
  /** The job as last read; undefined while it is being queued. */
  view: ModelJobView | undefined;
  /** Why it could not be queued or read, or why it failed. */
  error: unknown;
  cancel(): void;
  /** Queues the same request again (after a failure or a cancellation). */
  restart(): void;
}

/**
 * Runs one model job per distinct request and follows it: the first time `request` is seen (and `enabled`), `start`
 * queues the job; its status is then polled until it ends. Results are deterministic for their request, so a request
 * seen again shows its earlier job instead of queueing another.
 */
export function useModelJob(teamId: number, request: string, start: () => Promise<ModelJobView>, enabled = true): ModelJob {
  const queryClient = useQueryClient();
  const [jobs, setJobs] = useState<Record<string, number>>({});
  const [failure, setFailure] = useState<{ request: string; error: unknown } | null>(null);
  const starting = useRef(new Set<string>());
  const startRef = useRef(start);
  startRef.current = start;
  const jobId = jobs[request] ?? null;

  const begin = useCallback(() => {
    if (starting.current.has(request)) return;
    starting.current.add(request);
    setFailure(null);
    startRef.current().then(
      (view) => {
        queryClient.setQueryData(codebookKeys.modelJob(teamId, view.job.id), view);
        setJobs((all) => ({ ...all, [request]: view.job.id }));
      },
      (error: unknown) => setFailure({ request, error }),
    ).finally(() => starting.current.delete(request));
  }, [queryClient, request, teamId]);

  useEffect(() => {
    if (enabled && jobId === null && failure?.request !== request) begin();
  }, [enabled, jobId, failure, request, begin]);

  const status = useModelJobStatus(teamId, jobId);
  const view = jobId === null ? undefined : status.data;
  const failed = view?.job.state === 'failed' ? new Error(view.job.error ?? 'The job failed') : null;
  return {
    view,
    error: (failure?.request === request ? failure.error : null) ?? status.error ?? failed,
    cancel: () => {
      if (jobId === null) return;
      void cancelModelJob(teamId, jobId).then((v) => queryClient.setQueryData(codebookKeys.modelJob(teamId, jobId), v), () => undefined);
    },
    restart: () => {
      setFailure(null);
      setJobs(({ [request]: _dropped, ...rest }) => rest);
    },
  };
}
