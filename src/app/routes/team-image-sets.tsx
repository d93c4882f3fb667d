import type { QueryClient } from '@tanstack/react-query';
import { useNavigate, type LoaderFunctionArgs } from 'react-router-dom';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { plural } from '../../lib/format';
import { CautionNote } from '../../components/ui/caution-note';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { imageSetsQueryOptions, useImageSets } from '../../lib/queries/image-sets';
import { CreateImageSetForm } from '../../features/image-sets/components/create-image-set-form';
import { ImageSetsTable } from '../../features/image-sets/components/image-sets-table';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(imageSetsQueryOptions(team.id));
  return null;
};

export function Component() {
  const navigate = useNavigate();
  const { team, teamId } = useCurrentTeam();
  const sets = useImageSets(teamId);
  if (!team) return null;
  const canEdit = team.role !== 'viewer';

  return (
    <>
      <title>{`Image sets · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={team.name}
        title="Image sets"
        description="The pictures codebooks learn from and are judged on. Within a set, each image is either training or held-out, never both."
      />
      <div className="flex flex-col gap-6">
        <CautionNote />
        {canEdit && (
          <Panel title="New image set" titleId="sets-new" description="Create the set first, then upload its images on the set's page.">
            <CreateImageSetForm teamId={team.id} onCreated={(set) => navigate(href.teamImageSet(team.id, set.id))} />
          </Panel>
        )}
        <Panel title="Sets" titleId="sets-list" description={sets.data ? plural(sets.data.length, 'set') : undefined} bodyClassName="px-5 py-2">
          {sets.isPending && <LoadingState label="Loading image sets…" />}
          {sets.isError && <ErrorState message={messageOf(sets.error)} onRetry={() => void sets.refetch()} className="my-3" />}
          {sets.data?.length === 0 && (
            <EmptyState title="No image sets yet — upload a training set" className="my-3">
              {canEdit
                ? 'Name a set above, then drop its images or a .zip archive on the page that opens.'
                : 'Engineers of this team create and fill image sets; they will be listed here.'}
            </EmptyState>
          )}
          {sets.data && sets.data.length > 0 && <ImageSetsTable teamId={team.id} sets={sets.data} />}
        </Panel>
      </div>
    </>
  );
}
