import type { QueryClient } from '@tanstack/react-query';
import { useEffect, useState } from 'react';
import type { LoaderFunctionArgs } from 'react-router-dom';
import { messageOf } from '../../lib/api-client';
import { plural } from '../../lib/format';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { useWorkers, workersQueryOptions, WORKERS_REFRESH_MS } from '../../features/workers/api/list-workers';
import { QueueDepth, WorkersTable } from '../../features/workers/components/workers-table';
import { requireAdmin } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireAdmin(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(workersQueryOptions(team.id));
  return null;
};

/** The current time, renewed every second, so "12 s ago" keeps counting between answers. */
function useNow(): number {
  const [now, setNow] = useState(() => Date.now());
  useEffect(() => {
    const timer = setInterval(() => setNow(Date.now()), 1_000);
    return () => clearInterval(timer);
  }, []);
  return now;
}

export function Component() {
  const { team, teamId } = useCurrentTeam();
  const workers = useWorkers(teamId);
  const now = useNow();
  if (!team) return null;

  return (
    <>
      <title>{`Workers · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={team.name}
        title="Workers"
        description={`The compute workers that train and evaluate runs, and the queue they take from. Refreshed every ${WORKERS_REFRESH_MS / 1000} s.`}
      />
      <div className="flex flex-col gap-6">
        {workers.isPending && <LoadingState label="Loading workers…" />}
        {workers.isError && <ErrorState message={messageOf(workers.error)} onRetry={() => void workers.refetch()} />}
        {workers.data && (
          <>
            <QueueDepth queue={workers.data.queue} />
            <Panel title="Compute workers" titleId="workers-list" description={plural(workers.data.workers.length, 'worker')}>
              {workers.data.workers.length === 0 ? (
                <EmptyState title="No worker is running">Queued jobs wait until a worker joins (npm run worker) or the server's own worker starts.</EmptyState>
              ) : (
                <WorkersTable workers={workers.data.workers} now={now} />
              )}
            </Panel>
          </>
        )}
      </div>
    </>
  );
}
