import type { OutboxMessage } from '../../../../server/contracts';
import { formatDateTime } from '../../../lib/format';
import { EmptyState } from '../../../components/ui/states';
import { LinkifiedText } from './linkified-text';

/** Messages the local capture server received, newest first; each opens to its plain-text body. */
export function OutboxList({ messages }: { messages: OutboxMessage[] }) {
  if (messages.length === 0) {
    return (
      <EmptyState title="No messages yet">
        Invitations and password-reset e-mails for this team's members are captured here instead of being delivered, while
        the server runs with its local mail catcher.
      </EmptyState>
    );
  }
  const sorted = [...messages].sort((a, b) => b.receivedAt.localeCompare(a.receivedAt));
  return (
    <ul className="flex flex-col gap-2">
      {sorted.map((message) => (
        <li key={message.id}>
          <details className="group rounded-lg border border-ink-200 bg-surface shadow-card open:border-ink-300">
            <summary className="grid cursor-pointer list-none grid-cols-[1fr_auto] items-baseline gap-x-4 gap-y-0.5 rounded-lg px-4 py-3 hover:bg-ink-50 sm:grid-cols-[14rem_1fr_auto] [&::-webkit-details-marker]:hidden">
              <span className="truncate text-sm text-ink-700">
                <span className="sr-only">To </span>
                {message.to.join(', ')}
              </span>
              <span className="order-3 col-span-2 truncate font-medium text-ink-950 sm:order-none sm:col-span-1">{message.subject}</span>
              <time dateTime={message.receivedAt} className="num text-sm text-ink-600">
                {formatDateTime(message.receivedAt)}
              </time>
            </summary>
            <div className="border-t border-ink-100 px-4 py-3">
              <dl className="mb-3 grid grid-cols-[4rem_1fr] gap-y-1 text-sm">
                <dt className="text-ink-600">From</dt>
                <dd className="text-ink-900">{message.from}</dd>
                <dt className="text-ink-600">To</dt>
                <dd className="text-ink-900">{message.to.join(', ')}</dd>
              </dl>
              <p className="max-w-[72ch] text-sm leading-relaxed whitespace-pre-wrap text-ink-900">
                <LinkifiedText text={message.text} />
              </p>
            </div>
          </details>
        </li>
      ))}
    </ul>
  );
}
