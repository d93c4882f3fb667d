import type { ReleaseDetail } from '../../../../server/contracts';
import { formatDateTime } from '../../../lib/format';

const VERBS = { proposed: 'proposed it', returned: 'sent it back', approved: 'approved it' } as const;

/** The review's thread, oldest first: each proposal's note, each return's and approval's comment. */
export function ReviewThread({ thread }: { thread: ReleaseDetail['thread'] }) {
  return (
    <ol className="flex flex-col gap-3" aria-label="Review thread">
      {thread.map((c) => (
        <li key={c.id} className="rounded-md border border-ink-100 bg-ink-50 px-4 py-3" data-kind={c.kind}>
          <p className="text-sm text-ink-700">
            <span className="font-medium text-ink-900">{c.author?.name ?? 'A former member'}</span> {VERBS[c.kind]} ·{' '}
            <time dateTime={c.createdAt}>{formatDateTime(c.createdAt)}</time>
          </p>
          {c.body && <p className="mt-1 text-sm whitespace-pre-wrap text-ink-900">{c.body}</p>}
        </li>
      ))}
    </ol>
  );
}
