import { BD_MIN_OVERLAP_FRACTION, type BaselineCodecName, type BdValues } from '../../../server/contracts';
import { cx } from '../../lib/cx';

const thin = '\u2009';

export const CODEC_LABELS: Record<BaselineCodecName, string> = { jpeg: 'JPEG', webp: 'WebP', avif: 'AVIF' };

/** Negative BD-rate means the compared curve needs fewer bits for the same PSNR: better, so it is not shown as "down". */
export function formatBdRate(value: number): string {
  return `${value > 0 ? '+' : value < 0 ? '−' : ''}${Math.abs(value).toFixed(2)}${thin}%`;
}

export function formatBdPsnr(value: number): string {
  return `${value > 0 ? '+' : value < 0 ? '−' : ''}${Math.abs(value).toFixed(3)}${thin}dB`;
}

/** One figure coloured by whether it favours the compared curve; a dash where none could be computed. */
export function BdFigure({ value, format, betterWhen }: { value: number | null; format: (v: number) => string; betterWhen: 'negative' | 'positive' }) {
  if (value === null) return <span className="text-ink-500">—</span>;
  const better = betterWhen === 'negative' ? value < 0 : value > 0;
  return <span className={cx('num whitespace-nowrap', better ? 'text-success-700' : value === 0 ? 'text-ink-800' : 'text-danger-700')}>{format(value)}</span>;
}

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

/** The sentence under every BD table: what the figures are averaged over, and when one is flagged. */
export function bdFootnote(methodLabel: string): string {
  return (
    `Curves drawn by ${methodLabel}. BD-PSNR is averaged over the rate interval both curves cover, BD-rate over the PSNR ` +
    `interval both cover; nothing is extrapolated. A figure is flagged when that interval is under ${percent(BD_MIN_OVERLAP_FRACTION)} of the ` +
    `shorter curve\u2019s range.`
  );
}

export interface BdRow extends BdValues {
  key: string;
  testName: string;
  referenceName: string;
  sameHeldOut?: boolean;
}

/** Rows of Bjøntegaard deltas with the interval each is averaged over and a note where a figure needs care. */
export function BdRows({ rows, caption, showTest = true }: { rows: BdRow[]; caption: string; showTest?: boolean }) {
  return (
    <table className="w-full border-collapse text-left text-sm">
      <caption className="sr-only">{caption}</caption>
      <thead>
        <tr className="border-b border-ink-200 text-xs tracking-[0.06em] text-ink-600 uppercase">
          {showTest && <th scope="col" className="py-2 pr-3 font-medium">Compared run</th>}
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
            {showTest && <td className="py-2 pr-3 font-medium text-ink-900">{row.testName}</td>}
            <td className="py-2 pr-3 text-ink-700">{row.referenceName}</td>
            <td className="py-2 pr-3 text-right" data-testid="bd-rate">
              <BdFigure value={row.bdRate} format={formatBdRate} betterWhen="negative" />
            </td>
            <td className="py-2 pr-3 text-right">
              <BdFigure value={row.bdPsnr} format={formatBdPsnr} betterWhen="positive" />
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
  );
}
