import type { OutboxMessage } from '../../../../server/contracts';
import { formatDateTime } from '../../../lib/format';
import { Badge } from '../../../components/ui/badge';
import { EmptyState } from '../../../components/ui/states';
import { LinkifiedText } from './linkified-text';

const kindLabels: Record<string, string> = { invitation: 'Invitation', job_finished: 'Job notice' };
const statusLabels: Record<OutboxMessage['status'], string> = { queued: 'Queued', sent: 'Delivered', failed: 'Not delivered' };

/** The mail this team's actions caused, newest first; each opens to its text and how delivery went. */
export function OutboxList({ messages }: { messages: OutboxMessage[] }) {
  if (messages.length === 0) {
    return (
      <EmptyState title="No messages yet">
        Invitations this team sends and notices of its finished jobs are listed here with their delivery status.
      </EmptyState>
    );
  }
  const sorted = [...messages].sort((a, b) => b.id - a.id);
  return (
    <ul className="flex flex-col gap-2">
      {sorted.map((message) => (
        <li key={message.id}>
          <details className="group rounded-lg border border-ink-200 bg-surface shadow-card open:border-ink-300">
            <summary className="grid cursor-pointer list-none grid-cols-[1fr_auto] items-baseline gap-x-4 gap-y-0.5 rounded-lg px-4 py-3 hover:bg-ink-50 sm:grid-cols-[14rem_1fr_auto_auto] [&::-webkit-details-marker]:hidden">
              <span className="truncate text-sm text-ink-700">
                <span className="sr-only">To </span>
                {message.to}
              </span>
              <span className="order-3 col-span-2 truncate font-medium text-ink-950 sm:order-none sm:col-span-1">{message.subject}</span>
              <Badge tone={message.status === 'failed' ? 'caution' : message.status === 'sent' ? 'outline' : 'accent'}>{statusLabels[message.status]}</Badge>
              <time dateTime={message.createdAt} className="num text-sm text-ink-600">
                {formatDateTime(message.createdAt)}
              </time>
            </summary>
            <div className="border-t border-ink-100 px-4 py-3">
              <dl className="mb-3 grid grid-cols-[7rem_1fr] gap-y-1 text-sm">
                <dt className="text-ink-600">Kind</dt>
                <dd className="text-ink-900">{kindLabels[message.kind] ?? message.kind}</dd>
                <dt className="text-ink-600">To</dt>
                <dd className="text-ink-900">{message.to}</dd>
                <dt className="text-ink-600">Delivery</dt>
                <dd className="text-ink-900">
                  {statusLabels[message.status]}
                  {message.sentAt ? ` on ${formatDateTime(message.sentAt)}` : ''}
                  {message.attempts > 1 ? ` after ${message.attempts} attempts` : ''}
                </dd>
                {message.lastError && (
                  <>
                    <dt className="text-ink-600">Last error</dt>
                    <dd className="text-ink-900">{message.lastError}</dd>
                  </>
                )}
              </dl>
              {message.text && (
                <p className="max-w-[72ch] text-sm leading-relaxed whitespace-pre-wrap text-ink-900">
                  <LinkifiedText text={message.text} />
                </p>
              )}
            </div>
          </details>
        </li>
      ))}
    </ul>
  );
}
