import type { QueryClient } from '@tanstack/react-query';
import { useState } from 'react';
import { Link, useNavigate, useParams, type LoaderFunctionArgs } from 'react-router-dom';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { formatDateTime, plural } from '../../lib/format';
import { Button, buttonClass } from '../../components/ui/button';
import { CautionNote } from '../../components/ui/caution-note';
import { ConfirmDialog } from '../../components/ui/confirm-dialog';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { Stat } from '../../components/ui/stat';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { useDeleteImageSet } from '../../features/image-sets/api/delete-image-set';
import { imageSetQueryOptions, useImageSet } from '../../features/image-sets/api/get-image-set';
import { setImagesQueryOptions, useSetImages } from '../../lib/queries/image-sets';
import { deleteErrorText, ImageGrid } from '../../features/image-sets/components/image-grid';
import { SplitForm } from '../../features/image-sets/components/split-form';
import { UploadPanel } from '../../features/image-sets/components/upload-panel';
import { parseTeamId, requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  const setId = parseTeamId(params.setId);
  await Promise.all([
    queryClient.ensureQueryData(imageSetQueryOptions(team.id, setId)),
    queryClient.ensureQueryData(setImagesQueryOptions(team.id, setId)),
  ]);
  return null;
};

export function Component() {
  const navigate = useNavigate();
  const { team, teamId } = useCurrentTeam();
  const setId = Number(useParams().setId);
  const set = useImageSet(teamId, setId);
  const images = useSetImages(teamId, setId);
  const remove = useDeleteImageSet(teamId);
  const [confirming, setConfirming] = useState(false);
  if (!team) return null;
  const canEdit = team.role !== 'viewer';
  const canDelete = team.role === 'admin';

  if (set.isPending) return <LoadingState label="Loading the image set…" />;
  if (set.isError) return <ErrorState title="The image set could not be loaded" message={messageOf(set.error)} onRetry={() => void set.refetch()} />;
  const { counts } = set.data;

  return (
    <>
      <title>{`${set.data.name} · Image sets · Cellwright`}</title>
      <PageHeader
        eyebrow={
          <Link to={href.teamImageSets(team.id)} className="hover:text-ink-900 hover:underline">
            Image sets
          </Link>
        }
        title={set.data.name}
        description={set.data.description ?? `Created ${formatDateTime(set.data.createdAt)}`}
        actions={
          <>
            {canEdit && counts.total > 0 && (
              <Link to={`${href.teamNewRun(team.id)}?set=${setId}`} className={buttonClass('primary')}>
                New run
              </Link>
            )}
            {canDelete && (
              <Button variant="secondary" onClick={() => setConfirming(true)}>
                Delete set
              </Button>
            )}
          </>
        }
      />

      <div className="flex flex-col gap-6">
        <dl className="grid gap-4 sm:grid-cols-3">
          <Stat label="Images" value={<span className="num">{counts.total}</span>} />
          <Stat label="Training" value={<span className="num">{counts.training}</span>} note="Codebooks learn from these." />
          <Stat label="Held-out" value={<span className="num">{counts.heldOut}</span>} note="Only ever used to measure." />
        </dl>

        {canEdit && (
          <div className="grid items-start gap-6 lg:grid-cols-[3fr_2fr]">
            <Panel title="Upload" titleId="set-upload">
              <UploadPanel teamId={team.id} setId={setId} />
            </Panel>
            <Panel title="Split by share" titleId="set-split" description="A seeded shuffle of the whole set.">
              <SplitForm teamId={team.id} setId={setId} imageCount={counts.total} />
            </Panel>
          </div>
        )}
        {canEdit && <CautionNote />}

        <Panel title="Images" titleId="set-images" description={images.data ? plural(images.data.length, 'image') : undefined}>
          {images.isPending && <LoadingState label="Loading images…" />}
          {images.isError && <ErrorState message={messageOf(images.error)} onRetry={() => void images.refetch()} />}
          {images.data?.length === 0 && (
            <EmptyState title="This set has no images yet">
              {canEdit ? 'Drop image files or a .zip archive on the upload area above.' : 'An engineer of this team uploads its images.'}
            </EmptyState>
          )}
          {images.data && images.data.length > 0 && (
            <ImageGrid teamId={team.id} setId={setId} images={images.data} canEdit={canEdit} canDelete={canDelete} />
          )}
        </Panel>
      </div>

      <ConfirmDialog
        open={confirming}
        title="Delete image set?"
        confirmLabel="Delete set"
        pending={remove.isPending}
        error={remove.isError ? deleteErrorText(remove.error) : null}
        onCancel={() => {
          setConfirming(false);
          remove.reset();
        }}
        onConfirm={() => remove.mutate(setId, { onSuccess: () => navigate(href.teamImageSets(team.id), { replace: true }) })}
      >
        <p>
          <span className="font-medium text-ink-950">{set.data.name}</span> and its {plural(counts.total, 'image')} are deleted. A set whose
          images a run still uses cannot be deleted; delete those runs first.
        </p>
      </ConfirmDialog>
    </>
  );
}
