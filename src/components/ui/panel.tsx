import type { ReactNode } from 'react';
import { cx } from '../../lib/cx';

/** A titled white surface; `titleId` lets the section be named by its heading for landmarks. */
export function Panel({
  title,
  titleId,
  description,
  actions,
  children,
  className,
  bodyClassName,
}: {
  title?: ReactNode;
  titleId?: string;
  description?: ReactNode;
  actions?: ReactNode;
  children: ReactNode;
  className?: string;
  bodyClassName?: string;
}) {
  return (
    <section
      aria-labelledby={title && titleId ? titleId : undefined}
      className={cx('rounded-lg border border-ink-200 bg-surface shadow-card', className)}
    >
      {(title || actions) && (
        <header className="flex flex-wrap items-start justify-between gap-3 border-b border-ink-100 px-5 py-3.5">
          <div>
            {title && (
              <h2 id={titleId} className="text-base font-semibold text-ink-900">
                {title}
              </h2>
            )}
            {description && <p className="mt-0.5 text-sm text-ink-600">{description}</p>}
          </div>
          {actions}
        </header>
      )}
      <div className={cx('px-5 py-4', bodyClassName)}>{children}</div>
    </section>
  );
}
