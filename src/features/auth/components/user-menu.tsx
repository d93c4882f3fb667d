import { useEffect, useId, useRef, useState } from 'react';
import { Link } from 'react-router-dom';
import type { User } from '../../../../server/contracts';
import { href } from '../../../config/routes';
import { initialsOf } from '../../../lib/auth';
import { messageOf } from '../../../lib/api-client';
import { cx } from '../../../lib/cx';
import { useSignOut } from '../api/sign-out';

/** Disclosure menu in the header: who is signed in, their password, and the way out. */
export function UserMenu({ user, onSignedOut }: { user: User; onSignedOut: () => void }) {
  const [open, setOpen] = useState(false);
  const menuId = useId();
  const rootRef = useRef<HTMLDivElement>(null);
  const buttonRef = useRef<HTMLButtonElement>(null);
  const signOut = useSignOut();

  useEffect(() => {
    if (!open) return;
    const onPointer = (event: PointerEvent) => {
      if (!rootRef.current?.contains(event.target as Node)) setOpen(false);
    };
    const onKey = (event: KeyboardEvent) => {
      if (event.key === 'Escape') {
        setOpen(false);
        buttonRef.current?.focus();
      }
    };
    document.addEventListener('pointerdown', onPointer);
    document.addEventListener('keydown', onKey);
    return () => {
      document.removeEventListener('pointerdown', onPointer);
      document.removeEventListener('keydown', onKey);
    };
  }, [open]);

  return (
    <div ref={rootRef} className="relative">
      <button
        ref={buttonRef}
        type="button"
        aria-expanded={open}
        aria-controls={menuId}
        onClick={() => setOpen((value) => !value)}
        className="flex h-9 items-center gap-2 rounded-md px-1.5 text-sm text-ink-100 hover:bg-ink-800"
      >
        <span aria-hidden="true" className="grid size-7 shrink-0 place-items-center rounded-full bg-ink-600 text-xs font-semibold text-white">
          {initialsOf(user.name)}
        </span>
        <span className="hidden max-w-[12rem] truncate sm:inline">{user.name}</span>
        <span className="sr-only">: account menu</span>
        <svg aria-hidden="true" viewBox="0 0 12 12" className={cx('size-3 shrink-0 transition-transform', open && 'rotate-180')}>
          <path d="M2.5 4.5 6 8l3.5-3.5" fill="none" stroke="currentColor" strokeWidth="1.5" strokeLinecap="round" />
        </svg>
      </button>
      <div
        id={menuId}
        hidden={!open}
        className="absolute top-full right-0 z-40 mt-2 w-64 rounded-lg border border-ink-200 bg-surface p-1.5 text-ink-900 shadow-pop"
      >
        <div className="px-2.5 py-2">
          <p className="truncate text-sm font-semibold">{user.name}</p>
          <p className="truncate text-sm text-ink-600">{user.email}</p>
        </div>
        <div className="my-1 h-px bg-ink-100" />
        <Link
          to={href.accountPassword()}
          onClick={() => setOpen(false)}
          className="flex h-9 w-full items-center rounded-md px-2.5 text-left text-base text-ink-800 hover:bg-ink-50"
        >
          Change password
        </Link>
        {signOut.isError && <p role="alert" className="px-2.5 py-1 text-sm text-danger-700">{messageOf(signOut.error)}</p>}
        <button
          type="button"
          onClick={() => signOut.mutate(undefined, { onSuccess: onSignedOut })}
          disabled={signOut.isPending}
          className="flex h-9 w-full items-center rounded-md px-2.5 text-left text-base text-ink-800 hover:bg-ink-50 disabled:text-ink-400"
        >
          {signOut.isPending ? 'Signing out…' : 'Sign out'}
        </button>
      </div>
    </div>
  );
}
