import type { QueryClient } from '@tanstack/react-query';
import { data, Link, useParams, type LoaderFunctionArgs } from 'react-router-dom';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { plural } from '../../lib/format';
import { buttonClass } from '../../components/ui/button';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { ErrorState, LoadingState } from '../../components/ui/states';
import { batchMatrixCsvUrl, batchQueryOptions, useBatch } from '../../features/evaluation-batches/api/get-batch';
import { BatchMatrix } from '../../features/evaluation-batches/components/batch-matrix';
import { BatchStatus } from '../../features/evaluation-batches/components/batch-status';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  const jobId = Number(params.jobId);
  if (!Number.isInteger(jobId) || jobId <= 0) throw data('No such evaluation', { status: 404 });
  await queryClient.ensureQueryData(batchQueryOptions(team.id, jobId));
  return null;
};

export function Component() {
  const { team, teamId } = useCurrentTeam();
  const jobId = Number(useParams().jobId);
  const batch = useBatch(teamId, jobId);
  if (!team) return null;
  const b = batch.data;

  return (
    <>
      <title>{`Evaluation ${jobId} · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={<Link to={href.teamEvaluations(team.id)}>Evaluations</Link>}
        title={b ? `${plural(b.codebooks.length, 'codebook')} × ${plural(b.sets.length, 'set')}` : `Evaluation ${jobId}`}
        description="Each codebook measured on every image of each set; figures pooled over the set (PSNR from the pooled MSE)."
        actions={
          b && (
            <a href={batchMatrixCsvUrl(team.id, jobId)} className={buttonClass('secondary')} download>
              Download CSV
            </a>
          )
        }
      />
      {batch.isPending && <LoadingState label="Loading the evaluation…" />}
      {batch.isError && <ErrorState message={messageOf(batch.error)} onRetry={() => void batch.refetch()} />}
      {b && (
        <div className="flex flex-col gap-6">
          <Panel title="Job" titleId="batch-job" bodyClassName="px-5 py-4">
            <BatchStatus teamId={team.id} batch={b} canCancel={team.role !== 'viewer'} />
          </Panel>
          <Panel title="Matrix" titleId="batch-matrix" bodyClassName="px-5 py-4">
            <BatchMatrix batch={b} />
          </Panel>
        </div>
      )}
    </>
  );
}
