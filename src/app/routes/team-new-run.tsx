import type { QueryClient } from '@tanstack/react-query';
import { data, Link, useNavigate, useSearchParams, type LoaderFunctionArgs } from 'react-router-dom';
import type { ImageSet } from '../../../server/contracts';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { buttonClass } from '../../components/ui/button';
import { PageHeader } from '../../components/ui/page-header';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { useSourceRun } from '../../features/run-setup/api/get-run';
import { imageSetsQueryOptions, setImagesQueryOptions, useImageSets } from '../../lib/queries/image-sets';
import { runQueryOptions } from '../../lib/queries/runs';
import { useImageCatalog } from '../../features/run-setup/api/list-set-images';
import { RunForm } from '../../features/run-setup/components/run-form';
import { emptyRunForm, fromRunConfig, type RunFormValues } from '../../features/run-setup/run-form-schema';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

function idParam(search: URLSearchParams, name: 'from' | 'set'): number | null {
  const value = Number(search.get(name));
  return Number.isInteger(value) && value > 0 ? value : null;
}
const fromParam = (search: URLSearchParams) => idParam(search, 'from');

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  if (team.role === 'viewer') throw data('Viewers read results; engineers and admins start runs', { status: 403 });
  const from = fromParam(new URL(request.url).searchParams);
  const [sets] = await Promise.all([
    queryClient.ensureQueryData(imageSetsQueryOptions(team.id)),
    from === null ? null : queryClient.ensureQueryData(runQueryOptions(team.id, from)),
  ]);
  await Promise.all(sets.map((set) => queryClient.ensureQueryData(setImagesQueryOptions(team.id, set.id))));
  return null;
};

/**
 * A fresh form starts from the set it was opened from (`?set=`), or else the first set that already has both
 * training and held-out images; one set on both sides is divided by its images' marks.
 */
function freshValues(sets: readonly ImageSet[], preferred: number | null): RunFormValues {
  const ready = sets.find((set) => set.id === preferred) ?? sets.find((set) => set.counts.training > 0 && set.counts.heldOut > 0) ?? null;
  return { ...emptyRunForm, trainingSetId: ready?.id ?? null, heldOutSetId: ready?.id ?? null };
}

export function Component() {
  const navigate = useNavigate();
  const [search] = useSearchParams();
  const from = fromParam(search);
  const preferredSet = idParam(search, 'set');
  const { team, teamId } = useCurrentTeam();
  const sets = useImageSets(teamId, { fresh: true });
  const catalog = useImageCatalog(teamId, sets.data ?? []);
  const source = useSourceRun(teamId, from);
  if (!team) return null;

  const header = (
    <PageHeader
      eyebrow={team.name}
      title={source.data ? `Run again: ${source.data.name}` : 'New run'}
      description={
        source.data
          ? 'The configuration of that run, copied. Change what you want to try; the original run stays as it was.'
          : 'Choose the images, the patch shape and the bit budget; the summary shows what the choice means before anything is trained.'
      }
    />
  );

  const failure = sets.error ?? catalog.error ?? source.error;
  if (failure) {
    return (
      <>
        {header}
        <ErrorState title="The form could not be prepared" message={messageOf(failure)} onRetry={() => void Promise.all([sets.refetch(), catalog.refetch(), source.refetch()])} />
      </>
    );
  }
  if (!sets.data || catalog.isPending || (from !== null && source.isPending)) {
    return (
      <>
        {header}
        <LoadingState label="Loading the team's images…" />
      </>
    );
  }
  if (sets.data.length === 0) {
    return (
      <>
        <title>{`New run · ${team.name} · Cellwright`}</title>
        {header}
        <EmptyState
          title="No image sets yet — upload a training set"
          action={
            <Link to={href.teamImageSets(team.id)} className={buttonClass('primary')}>
              Upload a training set
            </Link>
          }
        >
          A run trains on images of this team and measures on held-out images. Create a set and upload some first.
        </EmptyState>
      </>
    );
  }

  const defaults = source.data ? fromRunConfig(source.data.config, `${source.data.name} (changed)`) : freshValues(sets.data, preferredSet);

  return (
    <>
      <title>{`New run · ${team.name} · Cellwright`}</title>
      {header}
      <RunForm
        // A different source run is a different form, not an edit of this one.
        key={from === null ? `fresh-${preferredSet ?? ''}` : `from-${from}`}
        teamId={team.id}
        sets={sets.data}
        catalog={catalog.catalog}
        defaultValues={defaults}
        onCreated={(run) => {
          // useCreateRun has already invalidated the shared runs prefix, which every feature's run list reads.
          navigate(href.teamRun(team.id, run.id));
        }}
      />
    </>
  );
}
