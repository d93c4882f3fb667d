import { useId, type ReactNode } from 'react';
import { cx } from '../../../lib/cx';

/**
 * A labelled row of radio choices drawn as segments. Native radios underneath, so arrow keys, form reset and
 * screen readers behave as they do for any radio group.
 */
export function ChoiceGroup<T extends string>({
  legend,
  name,
  value,
  options,
  onChange,
  hint,
}: {
  legend: ReactNode;
  name: string;
  value: T;
  options: readonly { value: T; label: ReactNode; note?: ReactNode }[];
  onChange: (value: T) => void;
  hint?: ReactNode;
}) {
  const hintId = useId();
  return (
    <fieldset className="flex flex-col gap-1.5" aria-describedby={hint ? hintId : undefined}>
      <legend className="pb-1.5 text-sm font-medium text-ink-800">{legend}</legend>
      <div className="flex flex-wrap gap-1.5">
        {options.map((option) => (
          <label
            key={option.value}
            className={cx(
              'relative flex min-h-10 cursor-pointer flex-col justify-center rounded-md border px-3 py-1.5 text-sm transition-colors',
              'has-[:focus-visible]:outline-2 has-[:focus-visible]:outline-offset-2 has-[:focus-visible]:outline-focus',
              value === option.value ? 'border-ink-800 bg-ink-800 text-white' : 'border-ink-300 bg-surface text-ink-800 hover:border-ink-400',
            )}
          >
            <input
              type="radio"
              name={name}
              value={option.value}
              checked={value === option.value}
              onChange={() => onChange(option.value)}
              className="sr-only"
            />
            <span className="font-medium">{option.label}</span>
            {option.note && <span className={cx('text-xs', value === option.value ? 'text-ink-200' : 'text-ink-600')}>{option.note}</span>}
          </label>
        ))}
      </div>
      {hint && (
        <p id={hintId} className="text-sm text-ink-600">
          {hint}
        </p>
      )}
    </fieldset>
  );
}
