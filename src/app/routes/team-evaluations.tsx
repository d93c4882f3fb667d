import type { QueryClient } from '@tanstack/react-query';
import { Link, useNavigate, type LoaderFunctionArgs } from 'react-router-dom';
import { RUN_STATE_LABELS } from '../../../server/contracts';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { formatDateTime, plural } from '../../lib/format';
import { imageSetsQueryOptions, useImageSets } from '../../lib/queries/image-sets';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { codebooksQueryOptions, useCodebooks } from '../../features/codebooks/api/list-codebooks';
import { batchesQueryOptions, useBatches } from '../../features/evaluation-batches/api/list-batches';
import { BatchForm } from '../../features/evaluation-batches/components/batch-form';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  await Promise.all([
    queryClient.ensureQueryData(batchesQueryOptions(team.id)),
    queryClient.ensureQueryData(codebooksQueryOptions(team.id)),
    queryClient.ensureQueryData(imageSetsQueryOptions(team.id)),
  ]);
  return null;
};

export function Component() {
  const { team, teamId } = useCurrentTeam();
  const batches = useBatches(teamId);
  const codebooks = useCodebooks(teamId);
  const sets = useImageSets(teamId);
  const navigate = useNavigate();
  if (!team) return null;
  const canEvaluate = team.role !== 'viewer';

  return (
    <>
      <title>{`Evaluations · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={team.name}
        title="Evaluations"
        description="Measure several codebooks on several held-out image sets as one job, and compare them in one matrix."
      />
      <div className="flex flex-col gap-6">
        {canEvaluate && codebooks.data && sets.data && (
          <Panel title="New evaluation batch" titleId="new-batch" bodyClassName="px-5 py-4">
            <BatchForm teamId={team.id} codebooks={codebooks.data} sets={sets.data} onCreated={(b) => void navigate(href.teamEvaluation(team.id, b.job.id))} />
          </Panel>
        )}
        <Panel title="Evaluations" titleId="batch-list" description={batches.data ? plural(batches.data.length, 'evaluation') : undefined} bodyClassName="px-5 py-2">
          {batches.isPending && <LoadingState label="Loading evaluations…" />}
          {batches.isError && <ErrorState message={messageOf(batches.error)} onRetry={() => void batches.refetch()} className="my-3" />}
          {batches.data?.length === 0 && (
            <EmptyState title="No evaluations yet" className="my-3">
              Evaluations of imported codebooks and batches appear here.
            </EmptyState>
          )}
          {batches.data && batches.data.length > 0 && (
            <ul className="divide-y divide-ink-100">
              {batches.data.map((b) => (
                <li key={b.job.id} className="flex flex-wrap items-baseline justify-between gap-2 py-2 text-sm">
                  <Link to={href.teamEvaluation(team.id, b.job.id)} className="font-medium text-ink-900 underline">
                    {`${plural(b.codebookCount, 'codebook')} on ${b.setNames.join(', ')}`}
                  </Link>
                  <span className="text-ink-600">
                    {RUN_STATE_LABELS[b.job.state]} · {formatDateTime(b.job.createdAt)}
                  </span>
                </li>
              ))}
            </ul>
          )}
        </Panel>
      </div>
    </>
  );
}
