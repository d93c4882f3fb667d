import type { ReactNode } from 'react';
import { cx } from '../../lib/cx';
import { Button } from './button';
import { Spinner } from './spinner';

export function LoadingState({ label, className }: { label: string; className?: string }) {
  return (
    <div role="status" className={cx('flex items-center gap-2.5 py-10 text-sm text-ink-600', className)}>
      <Spinner />
      <span>{label}</span>
    </div>
  );
}

export function EmptyState({
  title,
  children,
  action,
  className,
}: {
  title: ReactNode;
  children?: ReactNode;
  action?: ReactNode;
  className?: string;
}) {
  return (
    <div className={cx('flex flex-col items-start gap-3 rounded-lg border border-dashed border-ink-300 bg-ink-50/60 px-6 py-8', className)}>
      <CellGlyph />
      <div>
        <p className="text-base font-semibold text-ink-900">{title}</p>
        {children && <div className="mt-1 max-w-prose text-sm text-ink-600">{children}</div>}
      </div>
      {action}
    </div>
  );
}

export function ErrorState({
  title = 'This could not be loaded',
  message,
  onRetry,
  className,
}: {
  title?: ReactNode;
  message: ReactNode;
  onRetry?: () => void;
  className?: string;
}) {
  return (
    <div role="alert" className={cx('flex flex-col items-start gap-3 rounded-lg border border-danger-200 bg-danger-50 px-6 py-5', className)}>
      <div>
        <p className="text-base font-semibold text-danger-700">{title}</p>
        <p className="mt-1 text-sm text-ink-800">{message}</p>
      </div>
      {onRetry && (
        <Button variant="secondary" size="sm" onClick={onRetry}>
          Try again
        </Button>
      )}
    </div>
  );
}

/** A sparse 3 × 3 partition with one occupied cell: the studio's motif for "nothing here yet". */
function CellGlyph() {
  return (
    <svg aria-hidden="true" viewBox="0 0 36 36" className="size-9 text-ink-300">
      {[0, 1, 2].flatMap((row) =>
        [0, 1, 2].map((col) => (
          <rect
            key={`${row}-${col}`}
            x={1 + col * 12}
            y={1 + row * 12}
            width="10"
            height="10"
            rx="2"
            fill={row === 1 && col === 1 ? 'var(--color-ember-400)' : 'none'}
            stroke="currentColor"
            strokeWidth="1.5"
          />
        )),
      )}
    </svg>
  );
}
