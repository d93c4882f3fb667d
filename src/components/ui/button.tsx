import type { ButtonHTMLAttributes, Ref } from 'react';
import { cx } from '../../lib/cx';
import { Spinner } from './spinner';

type Variant = 'primary' | 'secondary' | 'ghost' | 'danger';
type Size = 'sm' | 'md';

const variants: Record<Variant, string> = {
  primary: 'bg-ember-600 text-white hover:bg-ember-700 active:bg-ember-800 disabled:bg-ember-300',
  secondary:
    'bg-surface text-ink-800 border border-ink-300 hover:bg-ink-50 hover:border-ink-400 active:bg-ink-100 disabled:text-ink-400',
  ghost: 'text-ink-700 hover:bg-ink-100 active:bg-ink-200 disabled:text-ink-400',
  danger: 'bg-danger-600 text-white hover:bg-danger-700 disabled:bg-danger-200',
};

const sizes: Record<Size, string> = {
  sm: 'h-8 px-3 text-sm gap-1.5',
  md: 'h-10 px-4 text-base gap-2',
};

export const buttonClass = (variant: Variant = 'primary', size: Size = 'md') =>
  cx(
    'inline-flex items-center justify-center rounded-md font-medium whitespace-nowrap transition-colors',
    'disabled:cursor-not-allowed',
    variants[variant],
    sizes[size],
  );

export type ButtonProps = ButtonHTMLAttributes<HTMLButtonElement> & {
  variant?: Variant;
  size?: Size;
  /** Shows a spinner and blocks repeat submits while a request is in flight. */
  pending?: boolean;
  ref?: Ref<HTMLButtonElement>;
};

export function Button({ variant, size, pending = false, className, children, disabled, type = 'button', ...rest }: ButtonProps) {
  return (
    <button
      type={type}
      className={cx(buttonClass(variant, size), className)}
      disabled={disabled || pending}
      aria-busy={pending || undefined}
      {...rest}
    >
      {pending && <Spinner size="sm" />}
      {children}
    </button>
  );
}
