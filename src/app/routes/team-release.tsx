import type { QueryClient } from '@tanstack/react-query';
import { Link, useParams, type LoaderFunctionArgs } from 'react-router-dom';
import type { ReleaseDetail } from '../../../server/contracts';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { formatDateTime } from '../../lib/format';
import { buttonClass } from '../../components/ui/button';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { ErrorState, LoadingState } from '../../components/ui/states';
import { releaseQueryOptions, useRelease } from '../../features/releases/api/get-release';
import { ProposeForm } from '../../features/releases/components/propose-form';
import { ReleaseStateBadge } from '../../features/releases/components/release-state';
import { ReviewForm } from '../../features/releases/components/review-form';
import { ReviewThread } from '../../features/releases/components/review-thread';
import { parseReleaseId } from '../../features/releases/release-id';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(releaseQueryOptions(team.id, parseReleaseId(params.releaseId)));
  return null;
};

export function Component() {
  const { me, team, teamId } = useCurrentTeam();
  const releaseId = Number(useParams().releaseId);
  const release = useRelease(teamId, releaseId);
  if (!team || !me) return null;
  if (release.isPending) return <LoadingState label="Loading the release…" />;
  if (release.isError) return <ErrorState message={messageOf(release.error)} onRetry={() => void release.refetch()} />;
  const writer = team.role !== 'viewer';
  return <ReleasePage teamId={team.id} teamName={team.name} release={release.data} canReview={writer && release.data.proposedBy?.id !== me.user.id} canPropose={writer} />;
}

function ReleasePage({ teamId, teamName, release, canReview, canPropose }: { teamId: number; teamName: string; release: ReleaseDetail; canReview: boolean; canPropose: boolean }) {
  const r = release;
  return (
    <>
      <title>{`${r.name} ${r.version} · Releases · ${teamName} · Cellwright`}</title>
      <PageHeader
        eyebrow={
          <Link to={href.teamReleases(teamId)} className="hover:text-ink-900 hover:underline">
            Release
          </Link>
        }
        title={
          <span className="flex flex-wrap items-center gap-3">
            {r.name} {r.version} <ReleaseStateBadge state={r.state} />
          </span>
        }
        description={
          <>
            Codebook{' '}
            <Link to={href.teamCodebook(teamId, r.codebookId)} className="font-medium hover:underline">
              {r.codebookName}
            </Link>
            , proposed by {r.proposedBy?.name ?? 'a former member'} on {formatDateTime(r.proposedAt)}
            {r.state === 'approved' && r.releasedAt && `, approved by ${r.reviewedBy?.name ?? 'a former member'} on ${formatDateTime(r.releasedAt)}`}.
          </>
        }
        actions={
          <div className="flex flex-wrap gap-2">
            <Link to={href.teamActivity(teamId, { targetType: 'release', targetId: String(r.id) })} className={buttonClass('secondary', 'sm')}>
              Activity
            </Link>
            {r.state === 'approved' && (
              <Link to={href.teamReleaseReport(teamId, r.id)} className={buttonClass('primary', 'sm')}>
                Release report
              </Link>
            )}
          </div>
        }
      />
      <div className="flex flex-col gap-6">
        {r.state === 'approved' && (
          <Panel title="Frozen" titleId="release-frozen">
            <dl className="grid grid-cols-[max-content_1fr] gap-x-6 gap-y-1.5 text-sm">
              <dt className="text-ink-600">Codeword checksum</dt>
              <dd className="font-mono break-all">{r.checksum}</dd>
              <dt className="text-ink-600">Held-out hash</dt>
              <dd className="font-mono break-all">{r.heldOutHash}</dd>
            </dl>
            <p className="mt-3 text-sm text-ink-600">Its codewords, evaluation and run can no longer be renamed, evaluated again or deleted.</p>
          </Panel>
        )}
        <Panel title="Review" titleId="release-review">
          <ReviewThread thread={r.thread} />
        </Panel>
        {r.state === 'proposed' && canReview && (
          <Panel title="Your review" titleId="release-your-review" description="Approve to release and freeze the codebook, or send it back with what should change.">
            <ReviewForm teamId={teamId} releaseId={r.id} />
          </Panel>
        )}
        {r.state === 'returned' && canPropose && (
          <Panel title="Propose again" titleId="release-propose-again">
            <ProposeForm teamId={teamId} codebookId={r.codebookId} previous={r} />
          </Panel>
        )}
      </div>
    </>
  );
}
