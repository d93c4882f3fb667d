import type { QueryClient } from '@tanstack/react-query';
import { Link, useParams, type LoaderFunctionArgs } from 'react-router-dom';
import type { ReleaseReport, RunCurve } from '../../../server/contracts';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { formatDateTime } from '../../lib/format';
import { Button, buttonClass } from '../../components/ui/button';
import { ErrorState, LoadingState } from '../../components/ui/states';
import { reconstructionImageUrl } from '../../features/codebooks/api/get-reconstruction';
import { releaseReportQueryOptions, useReleaseReport } from '../../features/releases/api/get-release-report';
import {
  ChannelSection,
  ChecksumsSection,
  ConfigurationSection,
  DecoderCostSection,
  HashesSection,
  ImagesSection,
  ReportSectionView,
  SignOffSection,
  WorstTilesSection,
  type ReportSection,
} from '../../features/releases/components/report-sections';
import { CodecBd } from '../../features/runs/components/codec-bd';
import { RdPanel } from '../../features/runs/components/rd-panel';
import { parseReleaseId } from '../../features/releases/release-id';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(releaseReportQueryOptions(team.id, parseReleaseId(params.releaseId)));
  return null;
};

/** The report's curve in the shape the run page's chart and BD table read (the same components draw it). */
function asRunCurve(report: ReleaseReport): RunCurve {
  return {
    run: { id: report.codebook.runId ?? 0, name: `${report.release.name} ${report.release.version}`, state: 'succeeded' },
    heldOutHash: report.hashes.heldOut,
    color: report.configuration.color,
    points: report.curve.points,
    baselines: report.curve.baselines,
    bd: report.curve.bd,
  };
}

/**
 * The sections in print order. Each is built from one field of the report, so a further section (channel robustness
 * from the channel simulation) is one more entry here fed by one more field.
 */
function sectionsOf(report: ReleaseReport, teamId: number): ReportSection[] {
  const curve = asRunCurve(report);
  const codebookId = report.codebook.id;
  return [
    { id: 'configuration', title: 'Configuration', content: <ConfigurationSection report={report} /> },
    { id: 'hashes', title: 'Training data and held-out images', content: <HashesSection report={report} /> },
    {
      id: 'rd-curve',
      title: 'Rate and distortion against JPEG, WebP and AVIF',
      content: (
        <div className="flex flex-col gap-4">
          <RdPanel curve={curve} onOpenCodebook={() => undefined} />
          <CodecBd curve={curve} />
        </div>
      ),
    },
    { id: 'images', title: 'Per image', content: <ImagesSection report={report} /> },
    { id: 'worst-tiles', title: 'Worst tiles', content: <WorstTilesSection report={report} viewUrl={(imageId, view) => reconstructionImageUrl(teamId, codebookId, imageId, view)} /> },
    { id: 'decoder-cost', title: 'Decoder cost', content: <DecoderCostSection report={report} /> },
    { id: 'channel', title: 'Channel robustness', content: <ChannelSection report={report} /> },
    { id: 'checksums', title: 'Checksums', content: <ChecksumsSection report={report} /> },
    { id: 'sign-off', title: 'Sign-off', content: <SignOffSection report={report} /> },
  ];
}

export function Component() {
  const { team, teamId } = useCurrentTeam();
  const releaseId = Number(useParams().releaseId);
  const report = useReleaseReport(teamId, releaseId);
  if (!team) return null;
  if (report.isPending) return <LoadingState label="Measuring the release report…" />;
  if (report.isError) return <ErrorState message={messageOf(report.error)} onRetry={() => void report.refetch()} />;
  const r = report.data.release;
  return (
    <article className="release-report" aria-labelledby="report-title">
      <title>{`Report · ${r.name} ${r.version} · ${team.name} · Cellwright`}</title>
      <div className="mb-4 flex flex-wrap items-center gap-2 print:hidden" data-testid="report-actions">
        <Link to={href.teamRelease(team.id, r.id)} className={buttonClass('secondary', 'sm')}>
          Back to the release
        </Link>
        <Button size="sm" onClick={() => window.print()}>
          Print or save as PDF
        </Button>
      </div>
      <header className="pb-4">
        <p className="text-sm text-ink-600">
          {team.name} · release report · {r.releasedAt ? formatDateTime(r.releasedAt) : ''}
        </p>
        <h1 id="report-title" className="text-2xl font-semibold text-ink-950">
          {r.name} {r.version}
        </h1>
        <p className="mt-1 text-sm text-ink-700">
          Codebook {report.data.codebook.name} · codewords {report.data.checksums.codewords.slice(0, 16)}…
        </p>
      </header>
      {sectionsOf(report.data, team.id).map((section, i) => (
        <ReportSectionView key={section.id} section={section} number={i + 1} />
      ))}
    </article>
  );
}
