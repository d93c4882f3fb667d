import type { ReactNode, ThHTMLAttributes } from 'react';
import { cx } from '../../lib/cx';

export type SortDirection = false | 'asc' | 'desc';

interface SortableHeaderProps {
  sorted: SortDirection;
  onToggle: ((event: unknown) => void) | undefined;
  /** Classes of the <th>. */
  className?: string;
  /** Extra classes of the toggle button (e.g. reversed order for right-aligned numbers). */
  buttonClassName?: string;
  arrowClassName?: string;
  children: ReactNode;
}

/** A column header that sorts on click and tells assistive technology its state through aria-sort. */
export function SortableHeader({ sorted, onToggle, className, buttonClassName, arrowClassName, children }: SortableHeaderProps) {
  const ariaSort: ThHTMLAttributes<HTMLTableCellElement>['aria-sort'] =
    sorted === 'asc' ? 'ascending' : sorted === 'desc' ? 'descending' : 'none';
  return (
    <th scope="col" aria-sort={ariaSort} className={className}>
      <button type="button" onClick={onToggle} className={cx('inline-flex items-center gap-1 uppercase hover:text-ink-900', buttonClassName)}>
        {children}
        <span aria-hidden="true" className={cx('w-2', arrowClassName)}>
          {sorted === 'asc' ? '▴' : sorted === 'desc' ? '▾' : ''}
        </span>
      </button>
    </th>
  );
}
