import { useId, type InputHTMLAttributes, type ReactNode, type Ref, type SelectHTMLAttributes } from 'react';
import { cx } from '../../lib/cx';

const controlClass = (invalid: boolean) =>
  cx(
    'block w-full rounded-md border bg-surface px-3 text-base text-ink-900 placeholder:text-ink-400',
    'transition-colors disabled:bg-ink-50 disabled:text-ink-500',
    invalid ? 'border-danger-600' : 'border-ink-300 hover:border-ink-400',
  );

type FieldFrameProps = {
  id: string;
  label: ReactNode;
  hint?: ReactNode;
  error?: string;
  hintId: string;
  errorId: string;
  children: ReactNode;
  className?: string;
};

function FieldFrame({ id, label, hint, error, hintId, errorId, children, className }: FieldFrameProps) {
  return (
    <div className={cx('flex flex-col gap-1.5', className)}>
      <label htmlFor={id} className="text-sm font-medium text-ink-800">
        {label}
      </label>
      {children}
      {hint && !error && (
        <p id={hintId} className="text-sm text-ink-600">
          {hint}
        </p>
      )}
      {error && (
        <p id={errorId} className="flex items-start gap-1.5 text-sm text-danger-700">
          <span aria-hidden="true" className="mt-[0.4rem] inline-block size-1.5 shrink-0 rounded-full bg-danger-600" />
          {error}
        </p>
      )}
    </div>
  );
}

/** aria-describedby points at the error when there is one, otherwise at the hint. */
function describedBy(hint: ReactNode, error: string | undefined, hintId: string, errorId: string) {
  if (error) return errorId;
  return hint ? hintId : undefined;
}

export type TextFieldProps = Omit<InputHTMLAttributes<HTMLInputElement>, 'id'> & {
  label: ReactNode;
  hint?: ReactNode;
  error?: string;
  ref?: Ref<HTMLInputElement>;
  containerClassName?: string;
};

export function TextField({ label, hint, error, className, containerClassName, ...input }: TextFieldProps) {
  const id = useId();
  const hintId = `${id}-hint`;
  const errorId = `${id}-error`;
  return (
    <FieldFrame id={id} label={label} hint={hint} error={error} hintId={hintId} errorId={errorId} className={containerClassName}>
      <input
        id={id}
        aria-invalid={error ? true : undefined}
        aria-describedby={describedBy(hint, error, hintId, errorId)}
        className={cx(controlClass(Boolean(error)), 'h-10', className)}
        {...input}
      />
    </FieldFrame>
  );
}

export type SelectFieldProps = Omit<SelectHTMLAttributes<HTMLSelectElement>, 'id'> & {
  label: ReactNode;
  hint?: ReactNode;
  error?: string;
  ref?: Ref<HTMLSelectElement>;
  containerClassName?: string;
};

export function SelectField({ label, hint, error, className, containerClassName, children, ...select }: SelectFieldProps) {
  const id = useId();
  const hintId = `${id}-hint`;
  const errorId = `${id}-error`;
  return (
    <FieldFrame id={id} label={label} hint={hint} error={error} hintId={hintId} errorId={errorId} className={containerClassName}>
      <select
        id={id}
        aria-invalid={error ? true : undefined}
        aria-describedby={describedBy(hint, error, hintId, errorId)}
        className={cx(controlClass(Boolean(error)), 'h-10 pr-8', className)}
        {...select}
      >
        {children}
      </select>
    </FieldFrame>
  );
}
