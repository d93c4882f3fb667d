import { CONFIG_KEY_LABELS, INIT_LABELS, INIT_METHODS, type CompareResult } from '../../../../server/contracts';
import { cx } from '../../../lib/cx';

const isInit = (value: unknown): value is (typeof INIT_METHODS)[number] => (INIT_METHODS as readonly unknown[]).includes(value);

/** A setting's value as the run page shows it: init methods by their labels. */
function show(key: string, value: string | number | boolean | null | undefined): string {
  if (value === null || value === undefined) return '—';
  return key === 'init' && isInit(value) ? INIT_LABELS[value] : String(value);
}

/** Configurations side by side; rows whose values differ are marked with a bar and a word, not only a tint. */
export function ConfigDiff({ result }: { result: CompareResult }) {
  const differing = new Set(result.differingKeys);
  const keys = [...result.configKeys].sort((a, b) => Number(differing.has(b)) - Number(differing.has(a)) || a.localeCompare(b));
  return (
    <div className="overflow-x-auto">
      <table className="w-full border-collapse text-left text-sm">
        <caption className="sr-only">Configuration of each run; differing settings first</caption>
        <thead>
          <tr className="border-b border-ink-200 text-xs tracking-[0.06em] text-ink-600 uppercase">
            <th scope="col" className="py-2 pr-3 font-medium">Setting</th>
            {result.runs.map((run) => (
              <th key={run.id} scope="col" className="py-2 pr-3 font-medium normal-case tracking-normal text-ink-800">
                {run.name}
              </th>
            ))}
          </tr>
        </thead>
        <tbody>
          {keys.map((key) => {
            const differs = differing.has(key);
            return (
              <tr key={key} className={cx('border-b border-ink-100 last:border-b-0', differs && 'bg-ember-50/70')}>
                <th scope="row" className={cx('relative py-1.5 pr-3 pl-3 font-normal text-ink-700', differs && 'before:absolute before:top-1 before:bottom-1 before:left-0 before:w-[3px] before:rounded-full before:bg-ember-500')}>
                  <span>{CONFIG_KEY_LABELS[key] ?? key}</span>
                  {differs && <span className="ml-2 text-xs font-medium text-ember-800">differs</span>}
                </th>
                {result.runs.map((run) => (
                  <td key={run.id} className={cx('num py-1.5 pr-3', differs ? 'font-medium text-ink-950' : 'text-ink-700')}>
                    {show(key, run.config[key])}
                  </td>
                ))}
              </tr>
            );
          })}
        </tbody>
      </table>
    </div>
  );
}
