import { useId, useRef, useState, type DragEvent } from 'react';
import { cx } from '../../../lib/cx';
import { plural } from '../../../lib/format';
import { Button } from '../../../components/ui/button';
import { formatBytes } from '../format';
import { useUploadQueue, type UploadEntry } from '../hooks/use-upload-queue';

const accepted = '.png,.jpg,.jpeg,.webp,.tif,.tiff,.avif,.gif,.zip,image/*,application/zip';

const statusLabels: Record<UploadEntry['status'], string> = {
  queued: 'Waiting',
  uploading: 'Sending',
  processing: 'Decoding on the server',
  done: 'Stored',
  failed: 'Not stored',
  cancelled: 'Cancelled',
};

/** Drop zone, file picker and one row per file with its own progress and the server's verdict. */
export function UploadPanel({ teamId, setId }: { teamId: number; setId: number }) {
  const queue = useUploadQueue(teamId, setId);
  const input = useRef<HTMLInputElement>(null);
  const [dragging, setDragging] = useState(false);
  const hintId = useId();

  const onDrop = (event: DragEvent<HTMLDivElement>) => {
    event.preventDefault();
    setDragging(false);
    if (event.dataTransfer.files.length > 0) queue.add(Array.from(event.dataTransfer.files));
  };

  const finished = queue.entries.filter((e) => e.status === 'done' || e.status === 'failed' || e.status === 'cancelled').length;

  return (
    <div className="flex flex-col gap-4">
      <div
        onDragEnter={(event) => {
          event.preventDefault();
          setDragging(true);
        }}
        onDragOver={(event) => event.preventDefault()}
        onDragLeave={(event) => {
          if (!event.currentTarget.contains(event.relatedTarget as Node | null)) setDragging(false);
        }}
        onDrop={onDrop}
        className={cx(
          'flex flex-wrap items-center gap-4 rounded-lg border-2 border-dashed px-5 py-6 transition-colors',
          dragging ? 'border-ember-500 bg-ember-50' : 'border-ink-300 bg-ink-50/60',
        )}
      >
        <DropGlyph />
        <div className="min-w-0 flex-1">
          <p className="font-medium text-ink-950">Drop images or .zip archives here</p>
          <p id={hintId} className="text-sm text-ink-600">
            PNG, JPEG, WebP, TIFF, AVIF or GIF; archives are unpacked on the server. Each file is sent on its own, so one bad file never
            stops the rest.
          </p>
        </div>
        <Button variant="secondary" onClick={() => input.current?.click()} aria-describedby={hintId}>
          Choose files…
        </Button>
        <input
          ref={input}
          type="file"
          multiple
          accept={accepted}
          className="sr-only"
          tabIndex={-1}
          aria-label="Files to upload"
          onChange={(event) => {
            if (event.target.files) queue.add(Array.from(event.target.files));
            event.target.value = '';
          }}
        />
      </div>

      {queue.entries.length > 0 && (
        <div>
          <div className="flex items-center justify-between pb-2">
            <p className="text-sm text-ink-700" aria-live="polite">
              {queue.active ? `Uploading: ${finished} of ${plural(queue.entries.length, 'file')} answered` : `${plural(queue.entries.length, 'file')} answered`}
            </p>
            {finished > 0 && (
              <Button variant="ghost" size="sm" onClick={queue.clearFinished}>
                Clear finished
              </Button>
            )}
          </div>
          <ul aria-label="Uploads" className="flex flex-col divide-y divide-ink-100 rounded-md border border-ink-200">
            {queue.entries.map((entry) => (
              <UploadRow key={entry.key} entry={entry} onCancel={() => queue.cancel(entry.key)} />
            ))}
          </ul>
        </div>
      )}
    </div>
  );
}

export function UploadRow({ entry, onCancel }: { entry: UploadEntry; onCancel: () => void }) {
  const percent = entry.size > 0 ? Math.min(100, Math.round((entry.loaded / entry.size) * 100)) : entry.status === 'queued' ? 0 : 100;
  const inFlight = entry.status === 'queued' || entry.status === 'uploading' || entry.status === 'processing';
  const shown = entry.status === 'done' || entry.status === 'processing' ? 100 : percent;
  return (
    <li aria-label={entry.name} className="px-3.5 py-2.5">
      <div className="flex items-center gap-3">
        <StatusDot status={entry.status} />
        <p className="min-w-0 flex-1 truncate text-sm font-medium text-ink-900" title={entry.name}>
          {entry.name}
        </p>
        <span className="num shrink-0 text-xs text-ink-600">{formatBytes(entry.size)}</span>
        <span className={cx('w-40 shrink-0 text-right text-xs', entry.status === 'failed' ? 'text-danger-700' : 'text-ink-700')}>
          {statusLabels[entry.status]}
          {entry.status === 'done' && entry.stored + entry.duplicates > 1 && ` · ${entry.stored + entry.duplicates} images`}
        </span>
        {inFlight ? (
          <Button variant="ghost" size="sm" onClick={onCancel} aria-label={`Cancel upload of ${entry.name}`}>
            Cancel
          </Button>
        ) : (
          <span className="w-[4.25rem] shrink-0" aria-hidden="true" />
        )}
      </div>
      <progress
        max={100}
        value={shown}
        aria-label={`Upload of ${entry.name}`}
        className={cx(
          'mt-2 block h-1.5 w-full appearance-none overflow-hidden rounded-full bg-ink-100',
          '[&::-webkit-progress-bar]:bg-ink-100 [&::-webkit-progress-value]:transition-[width]',
          entry.status === 'failed'
            ? '[&::-moz-progress-bar]:bg-danger-600 [&::-webkit-progress-value]:bg-danger-600'
            : entry.status === 'done'
              ? '[&::-moz-progress-bar]:bg-success-700 [&::-webkit-progress-value]:bg-success-700'
              : '[&::-moz-progress-bar]:bg-ember-500 [&::-webkit-progress-value]:bg-ember-500',
        )}
      />
      {(entry.duplicates > 0 || entry.rejected.length > 0 || entry.error) && (
        <div className="mt-1.5 flex flex-col gap-1 text-sm">
          {entry.duplicates > 0 && (
            <p className="text-ink-600">{plural(entry.duplicates, 'image')} already in this set, kept once.</p>
          )}
          {entry.error && (
            <p role="alert" className="text-danger-700">
              {entry.error}
            </p>
          )}
          {entry.rejected.length > 0 && (
            <ul aria-label={`Problems with ${entry.name}`} className="flex flex-col gap-0.5 text-danger-700">
              {entry.rejected.map((rejection, index) => (
                <li key={`${rejection.file}-${index}`} className="flex items-start gap-1.5">
                  <span aria-hidden="true" className="mt-[0.45rem] inline-block size-1.5 shrink-0 rounded-full bg-danger-600" />
                  <span>{rejection.message}</span>
                </li>
              ))}
            </ul>
          )}
        </div>
      )}
    </li>
  );
}

function StatusDot({ status }: { status: UploadEntry['status'] }) {
  const tone =
    status === 'done' ? 'bg-success-700' : status === 'failed' ? 'bg-danger-600' : status === 'cancelled' ? 'bg-ink-300' : 'bg-ember-500';
  return <span aria-hidden="true" className={cx('inline-block size-2 shrink-0 rounded-full', tone, (status === 'uploading' || status === 'processing') && 'animate-pulse motion-reduce:animate-none')} />;
}

/** Four small tiles falling into a tray: patches entering the set. */
function DropGlyph() {
  return (
    <svg aria-hidden="true" viewBox="0 0 40 40" className="size-10 shrink-0 text-ink-400">
      <rect x="9" y="4" width="9" height="9" rx="1.5" fill="currentColor" opacity="0.55" />
      <rect x="22" y="4" width="9" height="9" rx="1.5" fill="currentColor" opacity="0.3" />
      <rect x="9" y="16" width="9" height="9" rx="1.5" fill="currentColor" opacity="0.3" />
      <rect x="22" y="16" width="9" height="9" rx="1.5" fill="var(--color-ember-500)" />
      <path d="M4 28v6a2 2 0 0 0 2 2h28a2 2 0 0 0 2-2v-6" fill="none" stroke="currentColor" strokeWidth="2" strokeLinecap="round" />
    </svg>
  );
}
