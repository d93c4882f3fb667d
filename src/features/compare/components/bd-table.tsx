import type { CompareResult } from '../../../../server/contracts';
import { cx } from '../../../lib/cx';

const thin = '\u2009';

/** Negative BD-rate means the compared run's curve needs fewer bits for the same PSNR: better, so it is not shown as "down". */
export function formatBdRate(value: number): string {
  return `${value > 0 ? '+' : value < 0 ? '−' : ''}${Math.abs(value).toFixed(2)}${thin}%`;
}

export function formatBdPsnr(value: number): string {
  return `${value > 0 ? '+' : value < 0 ? '−' : ''}${Math.abs(value).toFixed(3)}${thin}dB`;
}

function Value({ value, format, betterWhen }: { value: number | null; format: (v: number) => string; betterWhen: 'negative' | 'positive' }) {
  if (value === null) return <span className="text-ink-500">—</span>;
  const better = betterWhen === 'negative' ? value < 0 : value > 0;
  return <span className={cx('num', better ? 'text-success-700' : value === 0 ? 'text-ink-800' : 'text-danger-700')}>{format(value)}</span>;
}

/**
 * Bjøntegaard deltas (VCEG-M33, 2001) for every pair and for each run against JPEG on its own held-out images.
 * A value the server could not compute is shown as a dash with its reason.
 */
export function BdTable({ result }: { result: CompareResult }) {
  const name = new Map(result.runs.map((run) => [run.id, run.name]));
  const rows = [
    ...result.pairs.map((pair) => ({
      key: `${pair.reference}-${pair.test}`,
      referenceName: name.get(pair.reference) ?? `#${pair.reference}`,
      testName: name.get(pair.test) ?? `#${pair.test}`,
      ...pair,
    })),
    ...result.againstJpeg.map((row) => ({ key: `jpeg-${row.runId}`, referenceName: 'JPEG (same images)', testName: name.get(row.runId) ?? `#${row.runId}`, ...row })),
  ];
  return (
    <div className="overflow-x-auto">
      <table className="w-full border-collapse text-left text-sm">
        <caption className="sr-only">BD-rate and BD-PSNR of each compared run against its reference</caption>
        <thead>
          <tr className="border-b border-ink-200 text-xs tracking-[0.06em] text-ink-600 uppercase">
            <th scope="col" className="py-2 pr-3 font-medium">Compared run</th>
            <th scope="col" className="py-2 pr-3 font-medium">against reference</th>
            <th scope="col" className="py-2 pr-3 text-right font-medium">BD-rate</th>
            <th scope="col" className="py-2 pr-3 text-right font-medium">BD-PSNR</th>
            <th scope="col" className="py-2 font-medium">Note</th>
          </tr>
        </thead>
        <tbody>
          {rows.map((row) => (
            <tr key={row.key} className="border-b border-ink-100 last:border-b-0">
              <td className="py-2 pr-3 font-medium text-ink-900">{row.testName}</td>
              <td className="py-2 pr-3 text-ink-700">{row.referenceName}</td>
              <td className="py-2 pr-3 text-right" data-testid="bd-rate">
                <Value value={row.bdRate} format={formatBdRate} betterWhen="negative" />
              </td>
              <td className="py-2 pr-3 text-right">
                <Value value={row.bdPsnr} format={formatBdPsnr} betterWhen="positive" />
              </td>
              <td className="py-2 text-xs text-ink-600">{row.reason ?? ('sameHeldOut' in row && !row.sameHeldOut ? 'different held-out images' : '')}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}
