import { useState } from 'react';
import type { ImageRole, ImageSet } from '../../../../server/contracts';
import { cx } from '../../../lib/cx';
import { plural } from '../../../lib/format';
import type { ImageCatalog } from '../run-plan';

/**
 * Individual images from any of the team's sets, grouped by set. "Take training" / "take held-out" pick a set's
 * images by their marks in one click; single checkboxes add or drop any image.
 */
export function ImagePicker({
  label,
  sets,
  catalog,
  value,
  onChange,
  errorId,
}: {
  label: string;
  sets: readonly ImageSet[];
  catalog: ImageCatalog;
  value: readonly number[];
  onChange: (ids: number[]) => void;
  errorId?: string;
}) {
  const [open, setOpen] = useState<number | null>(sets[0]?.id ?? null);
  const chosen = new Set(value);

  const setMany = (ids: number[], on: boolean) => {
    const next = new Set(chosen);
    for (const id of ids) {
      if (on) next.add(id);
      else next.delete(id);
    }
    onChange([...next]);
  };
  const byRole = (setId: number, role: ImageRole) => (catalog.get(setId) ?? []).filter((image) => image.role === role).map((image) => image.id);

  return (
    <div role="group" aria-label={label} aria-describedby={errorId} className="rounded-md border border-ink-300 bg-surface">
      <p className="border-b border-ink-100 px-3 py-2 text-sm text-ink-700" aria-live="polite">
        {plural(value.length, 'image')} chosen
      </p>
      <ul className="max-h-72 divide-y divide-ink-100 overflow-y-auto">
        {sets.map((set) => {
          const images = catalog.get(set.id) ?? [];
          const inSet = images.filter((image) => chosen.has(image.id)).length;
          const expanded = open === set.id;
          return (
            <li key={set.id}>
              <div className="flex flex-wrap items-center gap-2 px-3 py-2">
                <button
                  type="button"
                  aria-expanded={expanded}
                  onClick={() => setOpen(expanded ? null : set.id)}
                  className="flex min-w-0 flex-1 items-center gap-2 text-left text-sm font-medium text-ink-900"
                >
                  <svg aria-hidden="true" viewBox="0 0 12 12" className={cx('size-3 shrink-0 transition-transform', expanded && 'rotate-90')}>
                    <path d="M4 2.5 7.5 6 4 9.5" fill="none" stroke="currentColor" strokeWidth="1.5" strokeLinecap="round" strokeLinejoin="round" />
                  </svg>
                  <span className="truncate">{set.name}</span>
                  <span className="num shrink-0 text-xs font-normal text-ink-600">
                    {inSet}/{images.length}
                  </span>
                </button>
                <button type="button" className="text-xs font-medium text-ember-700 hover:underline" onClick={() => setMany(byRole(set.id, 'training'), true)}>
                  Take training
                </button>
                <button type="button" className="text-xs font-medium text-ember-700 hover:underline" onClick={() => setMany(byRole(set.id, 'held-out'), true)}>
                  Take held-out
                </button>
                {inSet > 0 && (
                  <button type="button" className="text-xs font-medium text-ink-600 hover:underline" onClick={() => setMany(images.map((image) => image.id), false)}>
                    Drop all
                  </button>
                )}
              </div>
              {expanded && (
                <ul className="grid gap-x-4 px-3 pb-2 sm:grid-cols-2">
                  {images.length === 0 && <li className="text-sm text-ink-600">No images in this set.</li>}
                  {images.map((image) => (
                    <li key={image.id}>
                      <label className="flex items-center gap-2 py-0.5 text-sm">
                        <input
                          type="checkbox"
                          checked={chosen.has(image.id)}
                          onChange={(event) => setMany([image.id], event.target.checked)}
                          className="size-4 accent-ember-600"
                        />
                        <span className="min-w-0 flex-1 truncate" title={image.fileName}>
                          {image.fileName}
                        </span>
                        <span className="num shrink-0 text-xs text-ink-600">
                          {image.width}×{image.height}
                        </span>
                        <span className={cx('w-14 shrink-0 text-right text-xs', image.role === 'held-out' ? 'text-ink-900' : 'text-ink-500')}>
                          {image.role === 'held-out' ? 'held-out' : 'training'}
                        </span>
                      </label>
                    </li>
                  ))}
                </ul>
              )}
            </li>
          );
        })}
      </ul>
    </div>
  );
}
