import { useQueryClient, type QueryClient } from '@tanstack/react-query';
import { useState } from 'react';
import { data, Link, useNavigate, useParams, type LoaderFunctionArgs } from 'react-router-dom';
import type { RunDetail } from '../../../server/contracts';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { formatDateTime } from '../../lib/format';
import { Alert } from '../../components/ui/alert';
import { Button, buttonClass } from '../../components/ui/button';
import { ConfirmDialog } from '../../components/ui/confirm-dialog';
import { SelectField } from '../../components/ui/field';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { codebookKeys } from '../../features/codebooks/api/keys';
import { compareKeys } from '../../features/compare/api/keys';
import { useCancelRun } from '../../features/runs/api/cancel-run';
import { isTerminal, runQueryOptions, useRun } from '../../features/runs/api/get-run';
import { runCurveCsvUrl, useRunCurve } from '../../features/runs/api/get-run-curve';
import { CodecBd } from '../../features/runs/components/codec-bd';
import { runMetricsCsvUrl, useRunMetrics } from '../../features/runs/api/get-run-metrics';
import { MetricsTable } from '../../features/runs/components/metrics-table';
import { RunActions } from '../../features/runs/components/run-actions';
import { RunCodebooksTable } from '../../features/runs/components/run-codebooks-table';
import { RdPanel } from '../../features/runs/components/rd-panel';
import { RunConfig } from '../../features/runs/components/run-config';
import { RunProgress } from '../../features/runs/components/run-progress';
import { RunStateBadge } from '../../features/runs/components/run-state-badge';
import { TracePanel } from '../../features/runs/components/trace-panel';
import { formatBpp, formatDb } from '../../features/runs/format';
import { useRunEvents } from '../../features/runs/hooks/use-run-events';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

function parseRunId(value: string | undefined): number {
  const id = Number(value);
  if (!Number.isInteger(id) || id <= 0) throw data('No such run', { status: 404 });
  return id;
}

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(runQueryOptions(team.id, parseRunId(params.runId)));
  return null;
};

/** Results exist once the held-out evaluation has finished; before that the curve and metrics are empty. */
function hasResults(run: RunDetail): boolean {
  return run.jobs.some((job) => job.kind === 'evaluate' && job.state === 'succeeded');
}

export function Component() {
  const navigate = useNavigate();
  const queryClient = useQueryClient();
  const { team, teamId } = useCurrentTeam();
  const runId = Number(useParams().runId);
  const run = useRun(teamId, runId);
  const live = useRunEvents(teamId, runId, { enabled: Boolean(run.data && !isTerminal(run.data)) });
  // The stream feeds the cache; when it is down the query polls until the run is done.
  useRun(teamId, runId, { poll: !live.connected });
  const results = run.data ? hasResults(run.data) : false;
  const curve = useRunCurve(teamId, runId, { enabled: results });
  const metrics = useRunMetrics(teamId, runId, { enabled: results });
  const [confirmCancel, setConfirmCancel] = useState(false);
  const cancel = useCancelRun(teamId, runId);
  const [metricsCodebook, setMetricsCodebook] = useState<number | null>(null);

  if (!team) return null;
  if (run.isPending) return <LoadingState label="Loading the run…" />;
  if (run.isError) return <ErrorState message={messageOf(run.error)} onRetry={() => void run.refetch()} />;

  const r = run.data;
  const canWrite = team.role !== 'viewer';
  const done = isTerminal(r);
  const failedJobs = r.jobs.filter((job) => job.state === 'failed');
  const metricsBooks = metrics.data?.codebooks ?? [];
  const shownMetrics = metricsBooks.find((c) => c.codebookId === metricsCodebook) ?? metricsBooks[metricsBooks.length - 1];
  const openCodebook = (codebookId: number) => navigate(href.teamCodebook(team.id, codebookId));

  return (
    <>
      <title>{`${r.name} · Runs · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={
          <Link to={href.teamRuns(team.id)} className="hover:text-ink-900 hover:underline">
            Runs · #{r.id}
          </Link>
        }
        title={r.name}
        description={r.notes ?? undefined}
        actions={
          canWrite && (
            <>
              {!done && (
                <Button variant="secondary" onClick={() => setConfirmCancel(true)} disabled={r.jobs.some((j) => j.cancelRequested)}>
                  {r.jobs.some((j) => j.cancelRequested) ? 'Cancelling…' : 'Cancel run'}
                </Button>
              )}
              <RunActions
                teamId={team.id}
                runId={r.id}
                name={r.name}
                codebookCount={r.codebooks.length}
                canRename
                canDelete={team.role === 'admin' && done}
                onDeleted={() => navigate(href.teamRuns(team.id), { replace: true })}
                onChanged={() => {
                  // Codebooks and comparisons name runs (every run list shares the runs prefix, which the rename already refreshed).
                  for (const queryKey of [codebookKeys.team(team.id), compareKeys.team(team.id)]) void queryClient.invalidateQueries({ queryKey });
                }}
              />
              <Link to={href.teamNewRun(team.id, r.id)} className={buttonClass('primary')}>
                Run again with changes
              </Link>
            </>
          )
        }
      />
      <div className="flex flex-col gap-6">
        <dl className="flex flex-wrap items-center gap-x-6 gap-y-2 rounded-lg border border-ink-200 bg-surface px-5 py-3 text-sm shadow-card">
          <div className="flex items-center gap-2">
            <dt className="sr-only">State</dt>
            <dd>
              <RunStateBadge state={r.state} />
            </dd>
          </div>
          <div className="flex gap-1.5">
            <dt className="text-ink-600">Created</dt>
            <dd className="num text-ink-900">{formatDateTime(r.createdAt)}</dd>
          </div>
          {r.finishedAt && (
            <div className="flex gap-1.5">
              <dt className="text-ink-600">Finished</dt>
              <dd className="num text-ink-900">{formatDateTime(r.finishedAt)}</dd>
            </div>
          )}
          {r.createdBy && (
            <div className="flex gap-1.5">
              <dt className="text-ink-600">By</dt>
              <dd className="text-ink-900">{r.createdBy.name}</dd>
            </div>
          )}
          {r.bestOperatingPoint && (
            <div className="flex gap-1.5">
              <dt className="text-ink-600">Best point</dt>
              <dd className="num text-ink-900">
                {formatDb(r.bestOperatingPoint.psnr)} at {formatBpp(r.bestOperatingPoint.bpp)}
              </dd>
            </div>
          )}
          {!done && (
            <div className="ml-auto text-xs text-ink-600" role="status">
              {live.connected ? 'Live: following the run as it trains' : 'Checking for progress every 2 s'}
            </div>
          )}
        </dl>

        {r.state === 'failed' && (
          <Alert tone="error" title="This run failed">
            <p>{r.error ?? 'A job of this run stopped with an error.'}</p>
            {failedJobs.map((job) => (
              <p key={job.id} className="num mt-1 text-sm">
                {job.kind} job #{job.id}: {job.error ?? 'no message recorded'}
              </p>
            ))}
          </Alert>
        )}
        {r.state === 'cancelled' && <Alert title="This run was cancelled">Codebooks are kept only if training of every size had finished before the cancel.</Alert>}

        <Panel title="Progress" titleId="run-progress" description={`${r.normalized.sizes.length} codebook sizes, trained in increasing order`}>
          <RunProgress run={r} />
        </Panel>

        <Panel
          title="Rate–distortion"
          titleId="run-rd"
          description="Measured on the held-out images. Click a VQ point to open that codebook."
          actions={
            results && (
              <a href={runCurveCsvUrl(team.id, r.id)} download className={buttonClass('ghost', 'sm')}>
                Curve CSV
              </a>
            )
          }
        >
          {!results && !done && <LoadingState label="The curve appears once the held-out evaluation has finished…" />}
          {!results && done && <EmptyState title="No results">This run ended before its codebooks were evaluated.</EmptyState>}
          {curve.isPending && results && <LoadingState label="Loading the curve…" />}
          {curve.isError && <ErrorState message={messageOf(curve.error)} onRetry={() => void curve.refetch()} />}
          {curve.data && curve.data.points.length === 0 && <EmptyState title="No evaluated codebooks">Nothing was measured on the held-out images.</EmptyState>}
          {curve.data && curve.data.points.length > 0 && <RdPanel curve={curve.data} onOpenCodebook={openCodebook} />}
        </Panel>

        {curve.data && curve.data.points.length > 0 && (
          <Panel
            title="Against the codecs"
            titleId="run-bd"
            description="Bjøntegaard deltas: negative BD-rate, fewer bits than the codec for the same PSNR; positive BD-PSNR, higher PSNR at the same rate."
          >
            <CodecBd curve={curve.data} />
          </Panel>
        )}

        <div className="grid gap-6 lg:grid-cols-[minmax(0,3fr)_minmax(0,2fr)]">
          <Panel title="Convergence" titleId="run-trace" description="MSE per component on the training vectors after each Lloyd iteration">
            <TracePanel teamId={team.id} run={r} liveSteps={live.liveSteps} />
          </Panel>
          <Panel title="Configuration" titleId="run-config">
            <RunConfig run={r} />
          </Panel>
        </div>

        <Panel title="Codebooks" titleId="run-codebooks" bodyClassName="px-5 py-2">
          {r.codebooks.length === 0 ? (
            <p className="py-4 text-sm text-ink-600">{done ? 'This run produced no codebooks.' : 'Codebooks are stored when training finishes.'}</p>
          ) : (
            <RunCodebooksTable teamId={team.id} codebooks={r.codebooks} />
          )}
        </Panel>

        <Panel
          title="Per-image metrics"
          titleId="run-metrics"
          description="Each held-out image coded with one codebook"
          actions={
            results && (
              <a href={runMetricsCsvUrl(team.id, r.id)} download className={buttonClass('ghost', 'sm')}>
                Metrics CSV
              </a>
            )
          }
        >
          {!results && <p className="py-4 text-sm text-ink-600">Per-image figures appear after the held-out evaluation.</p>}
          {metrics.isPending && results && <LoadingState label="Loading metrics…" />}
          {metrics.isError && <ErrorState message={messageOf(metrics.error)} onRetry={() => void metrics.refetch()} />}
          {shownMetrics && (
            <div className="flex flex-col gap-3">
              <SelectField
                label="Codebook"
                containerClassName="max-w-56"
                value={shownMetrics.codebookId}
                onChange={(event) => setMetricsCodebook(Number(event.target.value))}
              >
                {metricsBooks.map((c) => (
                  <option key={c.codebookId} value={c.codebookId}>
                    K = {c.size} (b = {c.bits})
                  </option>
                ))}
              </SelectField>
              <MetricsTable images={shownMetrics.images} caption={`Held-out images coded with the ${shownMetrics.size}-codeword codebook`} />
            </div>
          )}
        </Panel>
      </div>

      <ConfirmDialog
        open={confirmCancel}
        title="Cancel this run?"
        confirmLabel="Cancel run"
        pending={cancel.isPending}
        error={cancel.isError ? messageOf(cancel.error) : null}
        onCancel={() => setConfirmCancel(false)}
        onConfirm={() => cancel.mutate(undefined, { onSuccess: () => setConfirmCancel(false) })}
      >
        Training stops after the current iteration. Codebooks are stored only once every size of the sweep has been trained, so a run cancelled during training keeps none.
      </ConfirmDialog>
    </>
  );
}
