import { COMPARE_MAX_RUNS, COMPARE_MIN_RUNS, RUN_STATE_LABELS, type RunSummary } from '../../../../server/contracts';
import { cx } from '../../../lib/cx';
import { formatDate } from '../../../lib/format';

/**
 * Checkboxes for 2–6 runs. Order of selection is kept (the first chosen is the reference of every pair); a seventh
 * box cannot be ticked, and the reason is said next to the count rather than by silently ignoring the click.
 */
export function RunPicker({ runs, selected, onChange }: { runs: RunSummary[]; selected: number[]; onChange: (next: number[]) => void }) {
  const full = selected.length >= COMPARE_MAX_RUNS;
  return (
    <fieldset className="flex flex-col gap-2">
      <legend className="mb-2 flex w-full flex-wrap items-baseline justify-between gap-2 text-sm">
        <span className="font-medium text-ink-800">Runs to compare</span>
        <span className={cx('num text-xs', selected.length < COMPARE_MIN_RUNS ? 'text-danger-700' : 'text-ink-600')}>
          {selected.length} of {COMPARE_MIN_RUNS}–{COMPARE_MAX_RUNS} chosen{full ? ' (the most a comparison takes)' : ''}
        </span>
      </legend>
      <ul className="grid gap-1.5 sm:grid-cols-2 xl:grid-cols-3">
        {runs.map((run) => {
          const position = selected.indexOf(run.id);
          const checked = position >= 0;
          return (
            <li key={run.id}>
              <label
                className={cx(
                  'flex cursor-pointer items-start gap-2.5 rounded-md border px-3 py-2 text-sm transition-colors has-focus-visible:outline-2 has-focus-visible:outline-focus',
                  checked ? 'border-ink-800 bg-ink-50' : 'border-ink-200 hover:border-ink-400',
                  !checked && full && 'cursor-not-allowed opacity-60',
                )}
              >
                <input
                  type="checkbox"
                  className="mt-0.5 size-4 accent-ink-800"
                  checked={checked}
                  disabled={!checked && full}
                  onChange={() => onChange(checked ? selected.filter((id) => id !== run.id) : [...selected, run.id])}
                />
                <span className="min-w-0 flex-1">
                  <span className="block truncate font-medium text-ink-900">{run.name}</span>
                  <span className="num block text-xs text-ink-600">
                    #{run.id} · {RUN_STATE_LABELS[run.state]} · {formatDate(run.createdAt)}
                  </span>
                </span>
                {checked && (
                  <span className="num rounded-sm bg-ink-800 px-1.5 text-xs text-white" aria-label={position === 0 ? 'reference' : `position ${position + 1}`}>
                    {position === 0 ? 'ref' : position + 1}
                  </span>
                )}
              </label>
            </li>
          );
        })}
      </ul>
    </fieldset>
  );
}
