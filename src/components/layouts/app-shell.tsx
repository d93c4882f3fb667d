import type { ReactNode } from 'react';
import { Wordmark } from '../brand/wordmark';
import { CautionNote } from '../ui/caution-note';
import { cx } from '../../lib/cx';

/**
 * The signed-in frame: a dark header band, a navigation column and the page. It knows nothing about
 * sessions or teams; the app passes the team switcher, user menu and navigation in as slots.
 */
export function AppShell({
  headerCenter,
  headerEnd,
  navigation,
  busy = false,
  children,
}: {
  headerCenter?: ReactNode;
  headerEnd?: ReactNode;
  navigation: ReactNode;
  /** True while the router loads the next page; shows a thin progress line under the header. */
  busy?: boolean;
  children: ReactNode;
}) {
  return (
    <div className="flex min-h-dvh flex-col">
      <a
        href="#main"
        className="sr-only z-50 rounded-md print:hidden bg-surface px-3 py-2 text-sm font-medium text-ink-900 shadow-pop focus:not-sr-only focus:fixed focus:top-2 focus:left-2"
      >
        Skip to content
      </a>
      <header className="relative bg-ink-900 text-white print:hidden">
        <div className="flex h-14 items-center gap-3 px-4 sm:gap-4 sm:px-6">
          <Wordmark tone="light" compact />
          <span aria-hidden="true" className="hidden h-6 w-px bg-ink-700 sm:block" />
          <div className="min-w-0 flex-1">{headerCenter}</div>
          {headerEnd}
        </div>
        <div
          aria-hidden="true"
          className={cx('absolute inset-x-0 bottom-0 h-0.5 origin-left bg-ember-500 transition-transform duration-500', busy ? 'scale-x-75' : 'scale-x-0')}
        />
      </header>
      <div className="flex flex-1 flex-col md:flex-row">
        <nav aria-label="Team" className="print:hidden border-b border-ink-200 bg-ink-50 md:w-56 md:shrink-0 md:border-r md:border-b-0">
          {navigation}
        </nav>
        <div className="flex min-w-0 flex-1 flex-col">
          <main id="main" tabIndex={-1} className="flex-1 px-5 py-8 outline-none sm:px-8 lg:px-10" aria-busy={busy || undefined}>
            <div className="mx-auto max-w-6xl">{children}</div>
          </main>
          <footer className="border-t border-ink-200 print:hidden px-5 py-4 sm:px-8 lg:px-10">
            <CautionNote variant="footer" className="mx-auto max-w-6xl" />
          </footer>
        </div>
      </div>
    </div>
  );
}

export function NavSection({ label, children }: { label: string; children: ReactNode }) {
  const id = `nav-${label.toLowerCase().replace(/\W+/g, '-')}`;
  return (
    <div className="px-3 py-4">
      <p id={id} className="px-2 pb-2 text-xs font-medium tracking-[0.08em] text-ink-600 uppercase">
        {label}
      </p>
      <ul aria-labelledby={id} className="flex gap-1 md:flex-col">
        {children}
      </ul>
    </div>
  );
}

/** Class for a navigation link; the current page gets the accent bar and aria-current from NavLink. */
export const navLinkClass = ({ isActive }: { isActive: boolean }) =>
  cx(
    'relative flex h-9 items-center rounded-md px-2.5 text-base transition-colors',
    isActive
      ? 'bg-surface font-medium text-ink-950 shadow-card before:absolute before:top-2 before:bottom-2 before:left-0 before:w-[3px] before:rounded-full before:bg-ember-500'
      : 'text-ink-700 hover:bg-ink-100 hover:text-ink-950',
  );
