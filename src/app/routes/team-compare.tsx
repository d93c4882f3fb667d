import type { QueryClient } from '@tanstack/react-query';
import { useState } from 'react';
import { useNavigate, useSearchParams, type LoaderFunctionArgs } from 'react-router-dom';
import { BD_METHOD_LABELS, BD_METHODS, bdMethodSchema, compareRate, DEFAULT_BD_METHOD, type BdMethod, type CompareRate } from '../../../server/contracts';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { focusedExtents, RdChart } from '../../components/charts/rd-chart';
import { Alert } from '../../components/ui/alert';
import { SelectField } from '../../components/ui/field';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { bdTableDownloadUrl, comparisonQueryOptions, isComparable, useComparison } from '../../features/compare/api/get-comparison';
import { buttonClass } from '../../components/ui/button';
import { runsQueryOptions, useRuns } from '../../lib/queries/runs';
import { BdTable } from '../../features/compare/components/bd-table';
import { compareChartSeries } from '../../features/compare/components/compare-chart-series';
import { ConfigDiff } from '../../features/compare/components/config-diff';
import { RunPicker } from '../../features/compare/components/run-picker';
import { SeriesList } from '../../features/compare/components/series-list';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

/** The selection lives in the URL (?runs=3,5&rate=actual&method=pchip) so a comparison can be shared as a link. */
function readSelection(params: URLSearchParams): { runIds: number[]; rate: CompareRate; method: BdMethod } {
  const runIds = (params.get('runs') ?? '')
    .split(',')
    .map((part) => Number(part.trim()))
    .filter((id, i, all) => Number.isInteger(id) && id > 0 && all.indexOf(id) === i);
  const rate = compareRate.safeParse(params.get('rate'));
  const method = bdMethodSchema.safeParse(params.get('method'));
  return { runIds, rate: rate.success ? rate.data : 'actual', method: method.success ? method.data : DEFAULT_BD_METHOD };
}

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  const { runIds, rate, method } = readSelection(new URL(request.url).searchParams);
  await Promise.all([
    queryClient.ensureQueryData(runsQueryOptions(team.id)),
    // A bad selection is reported on the page, next to the picker that fixes it, not as a failed page.
    isComparable(runIds) ? queryClient.prefetchQuery(comparisonQueryOptions(team.id, runIds, rate, method)) : null,
  ]);
  return null;
};

const rateLabels: Record<CompareRate, string> = { fixed: 'Fixed rate', entropy: 'Entropy rate', actual: 'Actual (container) rate' };

export function Component() {
  const navigate = useNavigate();
  const { team, teamId } = useCurrentTeam();
  const [params, setParams] = useSearchParams();
  const { runIds, rate, method } = readSelection(params);
  const candidates = useRuns(teamId);
  const comparison = useComparison(teamId, runIds, rate, method);
  const [fullRange, setFullRange] = useState(false);
  if (!team) return null;

  const select = (next: { runIds?: number[]; rate?: CompareRate; method?: BdMethod }) => {
    const query = new URLSearchParams();
    const ids = next.runIds ?? runIds;
    if (ids.length > 0) query.set('runs', ids.join(','));
    query.set('rate', next.rate ?? rate);
    query.set('method', next.method ?? method);
    setParams(query.toString().replace(/%2C/g, ','), { replace: true });
  };

  const result = isComparable(runIds) ? comparison.data : undefined;
  const series = result ? compareChartSeries(result) : [];
  const focused = focusedExtents(series);

  return (
    <>
      <title>{`Compare · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={team.name}
        title="Compare runs"
        description="Curves on common axes, one per structure of each run, configurations side by side, and Bjøntegaard deltas for every pair. The link of this page holds the selection."
      />
      <div className="flex flex-col gap-6">
        <Panel title="Selection" titleId="compare-selection">
          {candidates.isPending && <LoadingState label="Loading runs…" />}
          {candidates.isError && <ErrorState message={messageOf(candidates.error)} onRetry={() => void candidates.refetch()} />}
          {candidates.data && candidates.data.length < 2 && <EmptyState title="Two runs are needed">A comparison needs at least two runs of this team.</EmptyState>}
          {candidates.data && candidates.data.length >= 2 && (
            <div className="flex flex-col gap-4">
              <RunPicker runs={candidates.data} selected={runIds} onChange={(ids) => select({ runIds: ids })} />
              <SelectField label="Rate definition" value={rate} onChange={(event) => select({ rate: event.target.value as CompareRate })} containerClassName="w-64">
                {compareRate.options.map((option) => (
                  <option key={option} value={option}>
                    {rateLabels[option]}
                  </option>
                ))}
              </SelectField>
              <SelectField label="BD fitting method" value={method} onChange={(event) => select({ method: event.target.value as BdMethod })} containerClassName="w-full max-w-xl">
                {BD_METHODS.map((option) => (
                  <option key={option} value={option}>
                    {BD_METHOD_LABELS[option]}
                    {option === DEFAULT_BD_METHOD ? ' (default)' : ''}
                  </option>
                ))}
              </SelectField>
            </div>
          )}
        </Panel>

        {!isComparable(runIds) && <Alert>Choose between two and six runs above; the first one chosen is the reference.</Alert>}
        {isComparable(runIds) && comparison.isPending && <LoadingState label="Comparing…" />}
        {isComparable(runIds) && comparison.isError && <ErrorState message={messageOf(comparison.error)} onRetry={() => void comparison.refetch()} />}

        {result && (
          <>
            {result.heldOutMismatch && (
              <Alert tone="error" title="These runs were measured on different held-out images">
                Their curves are not directly comparable, so BD values between them are left out. Each run is still compared with JPEG, WebP and AVIF on its own images.
              </Alert>
            )}
            <Panel
              title="Rate–distortion"
              titleId="compare-rd"
              description={`PSNR against ${rateLabels[result.rate].toLowerCase()}, common axes`}
              actions={
                <label className="flex items-center gap-2 text-sm text-ink-700">
                  <input type="checkbox" className="size-4 accent-ink-800" checked={fullRange} onChange={(event) => setFullRange(event.target.checked)} />
                  Full codec range
                </label>
              }
            >
              <RdChart
                title={`PSNR against ${rateLabels[result.rate].toLowerCase()} for ${result.runs.length} runs, one curve per structure`}
                series={series}
                yLabel="PSNR"
                yUnit="dB"
                xExtent={fullRange ? result.axes.bpp : (focused?.x ?? result.axes.bpp)}
                yExtent={fullRange ? result.axes.psnr : (focused?.y ?? result.axes.psnr)}
                onSelectPoint={(point) => point.target && navigate(href.teamCodebook(team.id, Number(point.target)))}
              />
              <div className="mt-4">
                <SeriesList result={result} />
              </div>
            </Panel>
            <Panel
              title="Bjøntegaard deltas"
              titleId="compare-bd"
              description={`Negative BD-rate: fewer bits for the same PSNR. Positive BD-PSNR: higher PSNR at the same rate. Curves drawn by ${BD_METHOD_LABELS[result.method]}.`}
              actions={
                <div className="flex gap-2">
                  <a href={bdTableDownloadUrl(team.id, runIds, rate, method, 'csv')} download className={buttonClass('ghost', 'sm')}>
                    BD table CSV
                  </a>
                  <a href={bdTableDownloadUrl(team.id, runIds, rate, method, 'json')} download className={buttonClass('ghost', 'sm')}>
                    BD table JSON
                  </a>
                </div>
              }
            >
              <BdTable result={result} />
            </Panel>
            <Panel title="Configurations" titleId="compare-config">
              <ConfigDiff result={result} />
            </Panel>
          </>
        )}
      </div>
    </>
  );
}
