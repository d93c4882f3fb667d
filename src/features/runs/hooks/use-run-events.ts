import { useQueryClient } from '@tanstack/react-query';
import { useEffect, useState } from 'react';
import { z } from 'zod';
import { jobProgressEvent, jobStateEvent, runDetail, type RunDetail } from '../../../../server/contracts';
import { openEventStream, parsed } from '../../../lib/sse';
import type { TraceStep } from '../../../components/charts/trace-chart';
import { runKeys } from '../api/keys';

const snapshotEvent = z.object({ run: runDetail });
const endEvent = z.object({ run: runDetail.nullable() });

/** Longest live trace kept; a long sweep reports thousands of iterations and the chart needs only their shape. */
const LIVE_STEPS_LIMIT = 4_000;

/**
 * Follows a run's event stream and writes what it hears into the run's query cache entry, so every component that
 * reads the run (progress bars, state badge, cancel button) updates without its own subscription. Returns whether
 * the stream is open (the caller polls when it is not) and the iterations reported live, for the trace chart.
 */
export function useRunEvents(teamId: number, runId: number, { enabled }: { enabled: boolean }) {
  const queryClient = useQueryClient();
  const [connected, setConnected] = useState(false);
  const [liveSteps, setLiveSteps] = useState<TraceStep[]>([]);

  useEffect(() => {
    if (!enabled) return;
    const key = runKeys.detail(teamId, runId);
    const update = (change: (run: RunDetail) => RunDetail) =>
      queryClient.setQueryData<RunDetail>(key, (run) => (run ? change(run) : run));

    const close = openEventStream({
      path: `/teams/${teamId}/runs/${runId}/events`,
      onConnectionChange: setConnected,
      on: {
        snapshot: parsed(snapshotEvent, ({ run }) => queryClient.setQueryData(key, run)),
        progress: parsed(jobProgressEvent, (event) => {
          update((run) => ({
            ...run,
            state: run.state === 'queued' ? 'running' : run.state,
            jobs: run.jobs.map((job) => (job.id === event.jobId ? { ...job, state: 'running', progress: event.progress } : job)),
          }));
          const { size, iteration, distortion } = event.progress;
          if (event.kind === 'train' && size !== undefined && iteration !== undefined && distortion !== undefined) {
            setLiveSteps((steps) => [...steps, { size, iteration, distortion }].slice(-LIVE_STEPS_LIMIT));
          }
        }),
        state: parsed(jobStateEvent, (event) => {
          const known = queryClient.getQueryData<RunDetail>(key)?.jobs.some((job) => job.id === event.jobId);
          update((run) => ({
            ...run,
            state: event.runState,
            jobs: run.jobs.map((job) => (job.id === event.jobId ? { ...job, state: event.state, error: event.error } : job)),
          }));
          // A job queued after the stream opened (training queues evaluation) is not in the snapshot yet.
          if (!known) void queryClient.invalidateQueries({ queryKey: key });
          if (event.kind === 'train' && event.state === 'succeeded') void queryClient.invalidateQueries({ queryKey: key });
        }),
        end: parsed(endEvent, ({ run }) => {
          if (run) queryClient.setQueryData(key, run);
          else void queryClient.invalidateQueries({ queryKey: key });
          void queryClient.invalidateQueries({ queryKey: runKeys.curve(teamId, runId) });
          void queryClient.invalidateQueries({ queryKey: runKeys.metrics(teamId, runId) });
          void queryClient.invalidateQueries({ queryKey: runKeys.list(teamId) });
          close();
        }),
      },
    });
    return close;
  }, [enabled, queryClient, teamId, runId]);

  return { connected, liveSteps };
}
