import { cx } from '../../lib/cx';

/**
 * The Cellwright mark: a 2 × 2 partition of a patch in which one cell is lit, the picture of a
 * vector landing in its nearest codeword's cell.
 */
export function LogoMark({ className }: { className?: string }) {
  return (
    <svg aria-hidden="true" viewBox="0 0 32 32" className={cx('size-7', className)}>
      <rect width="32" height="32" rx="7" fill="var(--color-ink-800)" />
      <path d="M6 6h9v9H6zM17 6h9v9h-9zM6 17h9v9H6z" fill="var(--color-ink-400)" />
      <path d="M17 17h9v9h-9z" fill="var(--color-ember-500)" />
    </svg>
  );
}

/** `compact` drops the name below the sm breakpoint, where the header needs the room for the team. */
export function Wordmark({ tone = 'dark', compact = false, className }: { tone?: 'dark' | 'light'; compact?: boolean; className?: string }) {
  return (
    <span className={cx('inline-flex items-center gap-2.5', className)}>
      <LogoMark />
      <span className={cx('text-lg font-semibold tracking-tight', tone === 'light' ? 'text-white' : 'text-ink-950', compact && 'sr-only sm:not-sr-only')}>Cellwright</span>
    </span>
  );
}
