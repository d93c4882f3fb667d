import { RUN_STATE_LABELS, type JobState } from '../../../../server/contracts';
import { cx } from '../../../lib/cx';

const tones: Record<JobState, string> = {
  queued: 'border-ink-300 text-ink-700 bg-surface',
  running: 'border-ember-200 bg-ember-50 text-ember-800',
  succeeded: 'border-success-200 bg-success-50 text-success-700',
  failed: 'border-danger-200 bg-danger-50 text-danger-700',
  cancelled: 'border-ink-200 bg-ink-100 text-ink-700',
};

/** State as a word and a glyph, never by colour alone. */
export function RunStateBadge({ state, className }: { state: JobState; className?: string }) {
  return (
    <span className={cx('inline-flex h-6 items-center gap-1.5 rounded-sm border px-2 text-xs font-medium', tones[state], className)}>
      <StateGlyph state={state} />
      {RUN_STATE_LABELS[state]}
    </span>
  );
}

function StateGlyph({ state }: { state: JobState }) {
  const common = { 'aria-hidden': true, viewBox: '0 0 10 10', className: 'size-2.5' } as const;
  if (state === 'succeeded')
    return (
      <svg {...common}>
        <path d="M1.5 5.2 4 7.5 8.5 2.5" fill="none" stroke="currentColor" strokeWidth="1.6" strokeLinecap="round" strokeLinejoin="round" />
      </svg>
    );
  if (state === 'failed')
    return (
      <svg {...common}>
        <path d="M2 2l6 6M8 2 2 8" stroke="currentColor" strokeWidth="1.6" strokeLinecap="round" />
      </svg>
    );
  if (state === 'running')
    return (
      <svg {...common}>
        <circle cx="5" cy="5" r="3.2" fill="currentColor" className="animate-pulse motion-reduce:animate-none" />
      </svg>
    );
  if (state === 'cancelled')
    return (
      <svg {...common}>
        <path d="M2 5h6" stroke="currentColor" strokeWidth="1.6" strokeLinecap="round" />
      </svg>
    );
  return (
    <svg {...common}>
      <circle cx="5" cy="5" r="3.2" fill="none" stroke="currentColor" strokeWidth="1.4" />
    </svg>
  );
}
