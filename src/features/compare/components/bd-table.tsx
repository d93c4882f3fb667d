import { BD_METHOD_LABELS, BD_MIN_OVERLAP_FRACTION, type BdValues, type CompareResult } from '../../../../server/contracts';
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

const CODEC_LABELS = { jpeg: 'JPEG', webp: 'WebP', avif: 'AVIF' } as const;

const percent = (fraction: number) => `${Math.round(fraction * 100)}${thin}%`;

/** The intervals a row's figures are averaged over: rate for BD-PSNR, PSNR for BD-rate. */
export function sharedText(values: BdValues): string {
  const parts: string[] = [];
  if (values.shared.bpp) parts.push(`${values.shared.bpp[0].toPrecision(3)}–${values.shared.bpp[1].toPrecision(3)}${thin}bpp`);
  if (values.shared.psnr) parts.push(`${values.shared.psnr[0].toFixed(2)}–${values.shared.psnr[1].toFixed(2)}${thin}dB`);
  return parts.join(', ');
}

/** Why a row deserves care: no figure (with the server's reason), or a figure resting on a short shared interval. */
export function noteText(values: BdValues & { sameHeldOut?: boolean }): string {
  if (values.reason) return values.reason;
  if (values.sameHeldOut === false) return 'different held-out images';
  if (values.shortOverlap) {
    return `short overlap: the curves share ${percent(values.sharedFraction.bpp)} of the shorter rate range and ${percent(values.sharedFraction.psnr)} of the shorter PSNR range (under ${percent(BD_MIN_OVERLAP_FRACTION)}); read with care`;
  }
  return '';
}

/**
 * Bjøntegaard deltas (VCEG-M33, 2001) for every pair and for each run against JPEG, WebP and AVIF on its own held-out
 * images, each averaged only over the interval both curves cover (shown beside it). A value the server could not
 * compute is shown as a dash with its reason; a figure on a short shared interval carries a warning.
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
    ...result.againstBaselines.map((row) => ({
      key: `${row.codec}-${row.runId}`,
      referenceName: `${CODEC_LABELS[row.codec]} (same images)`,
      testName: name.get(row.runId) ?? `#${row.runId}`,
      ...row,
    })),
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
            <th scope="col" className="py-2 pr-3 font-medium">Shared interval</th>
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
              <td className="num py-2 pr-3 text-xs text-ink-700" data-testid="bd-shared">
                {sharedText(row)}
              </td>
              <td className={cx('py-2 text-xs', row.shortOverlap && !row.reason ? 'text-danger-700' : 'text-ink-600')} data-testid="bd-note">
                {noteText(row)}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
      <p className="mt-3 text-xs text-ink-600" data-testid="bd-method">
        Curves drawn by {BD_METHOD_LABELS[result.method]}. BD-PSNR is averaged over the rate interval both curves cover, BD-rate over the PSNR
        interval both cover; nothing is extrapolated. A figure is flagged when that interval is under {percent(BD_MIN_OVERLAP_FRACTION)} of the
        shorter curve&rsquo;s range.
      </p>
    </div>
  );
}
