import type { QueryClient } from '@tanstack/react-query';
import { Link, type LoaderFunctionArgs } from 'react-router-dom';
import { href } from '../../config/routes';
import { roleDescriptions, roleLabels } from '../../config/roles';
import { messageOf } from '../../lib/api-client';
import { plural } from '../../lib/format';
import { buttonClass } from '../../components/ui/button';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { Stat } from '../../components/ui/stat';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { imageSetsQueryOptions, useImageSets } from '../../lib/queries/image-sets';
import { ImageSetsOverview } from '../../features/image-sets/components/image-sets-overview';
import { membersQueryOptions, useMembers } from '../../features/members/api/list-members';
import { useRuns } from '../../lib/queries/runs';
import { RecentRuns } from '../../features/run-setup/components/recent-runs';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  // Runs are not awaited: the page is useful without them and they poll while any run is working.
  await Promise.all([queryClient.ensureQueryData(membersQueryOptions(team.id)), queryClient.ensureQueryData(imageSetsQueryOptions(team.id))]);
  return null;
};

const steps = [
  { title: 'Upload a training set', body: 'Images the codebook learns from, kept apart from the images it is judged on.' },
  { title: 'Choose patch shape and bit budget', body: 'A b-bit budget trains 2^b codewords for each patch, by generalised Lloyd iterations.' },
  { title: 'Prove it on held-out images', body: 'Rate in bits per pixel against MSE, PSNR and SSIM, beside standard codecs.' },
];

export function Component() {
  const { me, team, teamId } = useCurrentTeam();
  const members = useMembers(teamId);
  const sets = useImageSets(teamId);
  const runs = useRuns(teamId);
  if (!team) return null;
  const canEdit = team.role !== 'viewer';
  const noSets = sets.data?.length === 0;

  return (
    <>
      <title>{`${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow="Team"
        title={team.name}
        description="Design, train and evaluate vector-quantisation codebooks together."
        actions={
          canEdit &&
          sets.data &&
          sets.data.length > 0 && (
            <>
              <Link to={href.teamImportCodebook(team.id)} className={buttonClass('secondary')}>
                Import codebook
              </Link>
              <Link to={href.teamNewRun(team.id)} className={buttonClass('primary')}>
                New run
              </Link>
            </>
          )
        }
      />

      <dl className="grid gap-4 sm:grid-cols-3">
        <Stat label="Your role" value={roleLabels[team.role]} note={roleDescriptions[team.role]} />
        <Stat
          label="Members"
          value={
            members.isPending ? (
              <span className="text-base font-normal text-ink-600">Loading…</span>
            ) : members.isError ? (
              <span className="text-base font-normal text-danger-700">Unavailable</span>
            ) : (
              <span className="num">{members.data.members.length}</span>
            )
          }
          note={
            members.isError ? (
              messageOf(members.error)
            ) : (
              <Link to={href.teamMembers(team.id)} className="font-medium text-ember-700 hover:underline">
                {members.data ? `See ${plural(members.data.members.length, 'member')}` : 'See members'}
              </Link>
            )
          }
        />
        <Stat label="Signed in as" value={<span className="block truncate text-lg">{me?.user.name}</span>} note={me?.user.email} />
      </dl>

      <div className="mt-8 grid items-start gap-6 lg:grid-cols-[3fr_2fr]">
        <div className="flex min-w-0 flex-col gap-6">
          {!noSets && (
            <Panel
              title="Recent runs"
              titleId="home-runs"
              actions={
                <Link to={href.teamRuns(team.id)} className="text-sm font-medium text-ember-700 hover:underline">
                  All runs
                </Link>
              }
              bodyClassName="px-5 py-1.5"
            >
              {runs.isPending && <LoadingState label="Loading runs…" className="py-6" />}
              {runs.isError && <ErrorState title="Runs could not be loaded" message={messageOf(runs.error)} onRetry={() => void runs.refetch()} className="my-3" />}
              {runs.data?.length === 0 && (
                <p className="py-4 text-sm text-ink-600">
                  No runs yet.{' '}
                  {canEdit && (
                    <Link to={href.teamNewRun(team.id)} className="font-medium text-ember-700 hover:underline">
                      Start the first one
                    </Link>
                  )}
                </p>
              )}
              {runs.data && runs.data.length > 0 && <RecentRuns teamId={team.id} runs={runs.data} />}
            </Panel>
          )}
          <Panel
            title="Image sets"
            titleId="home-image-sets"
            actions={
              !noSets && (
                <Link to={href.teamImageSets(team.id)} className="text-sm font-medium text-ember-700 hover:underline">
                  All sets
                </Link>
              )
            }
            bodyClassName={noSets ? undefined : 'px-5 py-1.5'}
          >
            {sets.isPending && <LoadingState label="Loading image sets…" className="py-6" />}
            {sets.isError && <ErrorState title="Image sets could not be loaded" message={messageOf(sets.error)} onRetry={() => void sets.refetch()} />}
            {noSets && (
              <EmptyState
                title="No image sets yet — upload a training set"
                action={
                  canEdit ? (
                    <Link to={href.teamImageSets(team.id)} className={buttonClass('primary')}>
                      Upload a training set
                    </Link>
                  ) : undefined
                }
              >
                A codebook is only as good as the images it learns from.{' '}
                {canEdit ? 'Start with a set of training images; mark some held-out to judge the codebooks on.' : 'Engineers of this team upload the image sets.'}
              </EmptyState>
            )}
            {sets.data && sets.data.length > 0 && <ImageSetsOverview teamId={team.id} sets={sets.data} />}
          </Panel>
        </div>
        <Panel title="How a codebook gets made" titleId="home-steps">
          <ol className="flex flex-col gap-4">
            {steps.map((step, index) => (
              <li key={step.title} className="grid grid-cols-[1.75rem_1fr] gap-3">
                <span aria-hidden="true" className="num grid size-7 place-items-center rounded-md bg-ink-100 text-sm font-medium text-ink-800">
                  {index + 1}
                </span>
                <div>
                  <p className="font-medium text-ink-950">{step.title}</p>
                  <p className="text-sm text-ink-600">{step.body}</p>
                </div>
              </li>
            ))}
          </ol>
        </Panel>
      </div>
      {members.isPending && <LoadingState label="Loading members…" className="sr-only" />}
      {members.isError && (
        <ErrorState className="mt-6" title="Members could not be loaded" message={messageOf(members.error)} onRetry={() => void members.refetch()} />
      )}
    </>
  );
}
