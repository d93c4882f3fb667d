import { useMemo, useState } from 'react';
import type { Image, ImageRole } from '../../../../server/contracts';
import { isApiError, messageOf } from '../../../lib/api-client';
import { cx } from '../../../lib/cx';
import { plural } from '../../../lib/format';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { ConfirmDialog } from '../../../components/ui/confirm-dialog';
import { useAssignImageRoles } from '../api/assign-image-roles';
import { useDeleteImage } from '../api/delete-image';
import { thumbnailUrl } from '../api/thumbnail-url';
import { formatBytes } from '../format';

type Filter = 'all' | ImageRole;

const filterLabels: Record<Filter, string> = { all: 'All', training: 'Training', 'held-out': 'Held-out' };

/** Why a delete was refused, in the words a user acts on; a 409 names the runs that still need the image. */
export function deleteErrorText(error: unknown): string {
  if (isApiError(error) && error.status === 409) return `Still in use — ${error.message}`;
  return messageOf(error);
}

/**
 * The set's images as thumbnails. Engineers and admins select tiles (checkbox, or click the tile) and mark the
 * selection training or held-out in one request; admins also delete single images.
 */
export function ImageGrid({
  teamId,
  setId,
  images,
  canEdit,
  canDelete,
}: {
  teamId: number;
  setId: number;
  images: Image[];
  canEdit: boolean;
  canDelete: boolean;
}) {
  const [filter, setFilter] = useState<Filter>('all');
  const [selected, setSelected] = useState<ReadonlySet<number>>(new Set());
  const [toDelete, setToDelete] = useState<Image | null>(null);
  const assign = useAssignImageRoles(teamId, setId);
  const remove = useDeleteImage(teamId);

  // In upload order (by id), so marking a tile never moves it from under the pointer.
  const shown = useMemo(
    () => [...images].sort((a, b) => a.id - b.id).filter((image) => filter === 'all' || image.role === filter),
    [images, filter],
  );
  // Selections of images that disappeared (deleted elsewhere, filtered away) must not be acted on.
  const present = new Set(images.map((image) => image.id));
  const chosen = [...selected].filter((id) => present.has(id));

  const toggle = (id: number) =>
    setSelected((current) => {
      const next = new Set(current);
      if (next.has(id)) next.delete(id);
      else next.add(id);
      return next;
    });

  const mark = (role: ImageRole) =>
    assign.mutate({ imageIds: chosen, role }, { onSuccess: () => setSelected(new Set()) });

  const count = (role: ImageRole) => images.filter((image) => image.role === role).length;

  return (
    <div className="flex flex-col gap-3">
      <div className="flex flex-wrap items-center gap-3">
        <div role="group" aria-label="Show images" className="inline-flex rounded-md border border-ink-300 bg-surface p-0.5">
          {(['all', 'training', 'held-out'] as const).map((value) => (
            <button
              key={value}
              type="button"
              aria-pressed={filter === value}
              onClick={() => setFilter(value)}
              className={cx(
                'h-7 rounded-[0.25rem] px-2.5 text-sm transition-colors',
                filter === value ? 'bg-ink-800 text-white' : 'text-ink-700 hover:bg-ink-100',
              )}
            >
              {filterLabels[value]}
              <span className="num ml-1.5 text-xs opacity-80">{value === 'all' ? images.length : count(value)}</span>
            </button>
          ))}
        </div>
        {canEdit && (
          <div role="toolbar" aria-label="Selected images" className="ml-auto flex flex-wrap items-center gap-2">
            <span className="text-sm text-ink-700" aria-live="polite">
              {chosen.length === 0 ? 'Select images to mark them' : `${plural(chosen.length, 'image')} selected`}
            </span>
            <Button variant="ghost" size="sm" onClick={() => setSelected(new Set(shown.map((image) => image.id)))} disabled={shown.length === 0}>
              Select shown
            </Button>
            <Button variant="ghost" size="sm" onClick={() => setSelected(new Set())} disabled={chosen.length === 0}>
              Clear
            </Button>
            <Button variant="secondary" size="sm" onClick={() => mark('training')} disabled={chosen.length === 0} pending={assign.isPending && assign.variables?.role === 'training'}>
              Mark training
            </Button>
            <Button variant="secondary" size="sm" onClick={() => mark('held-out')} disabled={chosen.length === 0} pending={assign.isPending && assign.variables?.role === 'held-out'}>
              Mark held-out
            </Button>
          </div>
        )}
      </div>
      {assign.isError && <Alert tone="error">{messageOf(assign.error)}</Alert>}

      {shown.length === 0 ? (
        <p className="rounded-md border border-dashed border-ink-300 px-4 py-6 text-sm text-ink-600">
          No {filter === 'all' ? '' : `${filterLabels[filter].toLowerCase()} `}images in this set.
        </p>
      ) : (
        <ul aria-label="Images" className="grid grid-cols-[repeat(auto-fill,minmax(9.5rem,1fr))] gap-3">
          {shown.map((image) => (
            <ImageTile
              key={image.id}
              teamId={teamId}
              image={image}
              selectable={canEdit}
              selected={selected.has(image.id)}
              onToggle={() => toggle(image.id)}
              onDelete={canDelete ? () => setToDelete(image) : undefined}
            />
          ))}
        </ul>
      )}

      <ConfirmDialog
        open={toDelete !== null}
        title="Delete image?"
        confirmLabel="Delete image"
        pending={remove.isPending}
        error={remove.isError ? deleteErrorText(remove.error) : null}
        onCancel={() => {
          setToDelete(null);
          remove.reset();
        }}
        onConfirm={() => {
          if (!toDelete) return;
          remove.mutate(toDelete.id, {
            onSuccess: () => {
              setToDelete(null);
              remove.reset();
            },
          });
        }}
      >
        <p>
          <span className="font-medium text-ink-950">{toDelete?.fileName}</span> is removed from this set. Runs that used it keep their
          results; an image a run still uses cannot be deleted.
        </p>
      </ConfirmDialog>
    </div>
  );
}

function ImageTile({
  teamId,
  image,
  selectable,
  selected,
  onToggle,
  onDelete,
}: {
  teamId: number;
  image: Image;
  selectable: boolean;
  selected: boolean;
  onToggle: () => void;
  onDelete?: () => void;
}) {
  const checkboxId = `image-select-${image.id}`;
  return (
    <li
      className={cx(
        'group relative flex flex-col overflow-hidden rounded-md border bg-surface shadow-card transition-colors',
        selected ? 'border-ember-500 ring-2 ring-ember-200' : 'border-ink-200',
      )}
    >
      <div className="relative aspect-square bg-[repeating-conic-gradient(var(--color-ink-100)_0_25%,var(--color-surface)_0_50%)] bg-[length:12px_12px]">
        <img
          src={thumbnailUrl(teamId, image.id)}
          alt={`Thumbnail of ${image.fileName}`}
          loading="lazy"
          decoding="async"
          className="size-full object-contain"
          onClick={selectable ? onToggle : undefined}
        />
        <span
          className={cx(
            'absolute top-1.5 right-1.5 rounded-sm px-1.5 py-px text-[0.6875rem] font-medium tracking-wide',
            image.role === 'held-out' ? 'bg-ink-800 text-white' : 'bg-surface/90 text-ink-800 ring-1 ring-ink-200',
          )}
        >
          {image.role === 'held-out' ? 'Held-out' : 'Training'}
        </span>
        {selectable && (
          <span className="absolute top-1.5 left-1.5 grid size-6 place-items-center rounded-sm bg-surface/90 ring-1 ring-ink-200">
            <input
              id={checkboxId}
              type="checkbox"
              checked={selected}
              onChange={onToggle}
              className="size-4 accent-ember-600"
              aria-label={`Select ${image.fileName}`}
            />
          </span>
        )}
      </div>
      <div className="flex items-start gap-1 px-2.5 py-2">
        <div className="min-w-0 flex-1">
          <p className="truncate text-sm font-medium text-ink-900" title={`${image.fileName} · ${image.format.toUpperCase()} · ${formatBytes(image.bytes)}`}>
            {image.fileName}
          </p>
          <p className="num text-xs text-ink-600">
            {image.width}×{image.height} px · {image.channels === 1 ? 'grey' : image.channels === 3 ? 'RGB' : `${image.channels} ch`}
          </p>
        </div>
        {onDelete && (
          <button
            type="button"
            onClick={onDelete}
            aria-label={`Delete ${image.fileName}`}
            className="grid size-7 shrink-0 place-items-center rounded-md text-ink-500 hover:bg-danger-50 hover:text-danger-700"
          >
            <svg aria-hidden="true" viewBox="0 0 16 16" className="size-4">
              <path d="M3 4.5h10M6.5 4.5V3h3v1.5M4.5 4.5l.6 8.5h5.8l.6-8.5" fill="none" stroke="currentColor" strokeWidth="1.3" strokeLinecap="round" strokeLinejoin="round" />
            </svg>
          </button>
        )}
      </div>
    </li>
  );
}
