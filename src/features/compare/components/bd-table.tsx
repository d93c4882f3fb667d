import { BD_METHOD_LABELS, type CompareResult } from '../../../../server/contracts';
import { bdFootnote, BdRows, CODEC_LABELS } from '../../../components/bd/bd-figures';
import { allSeries, seriesName } from './compare-chart-series';

/**
 * Bjøntegaard deltas (VCEG-M33, 2001) for every structure's curve of every run: against JPEG, WebP and AVIF on its
 * run's held-out images, and against every other curve on the same images, each averaged only over the interval both
 * curves cover (shown beside it). A value the server could not compute is shown as a dash with its reason (too few
 * points, different held-out images); a figure on a short shared interval carries a warning.
 */
export function BdTable({ result }: { result: CompareResult }) {
  const name = new Map(allSeries(result).map((series) => [series.id, seriesName(result, series)]));
  const rows = [
    ...result.seriesPairs.map((pair) => ({
      ...pair,
      key: `${pair.reference}-${pair.test}`,
      referenceName: name.get(pair.reference) ?? pair.reference,
      testName: name.get(pair.test) ?? pair.test,
    })),
    ...result.seriesAgainstBaselines.map((row) => ({
      ...row,
      key: `${row.codec}-${row.seriesId}`,
      referenceName: `${CODEC_LABELS[row.codec]} (same images)`,
      testName: name.get(row.seriesId) ?? row.seriesId,
    })),
  ];
  return (
    <div className="overflow-x-auto">
      <BdRows rows={rows} caption="BD-rate and BD-PSNR of each compared run's curves, one per structure, against its reference" />
      <p className="mt-3 text-xs text-ink-600" data-testid="bd-method">
        {bdFootnote(BD_METHOD_LABELS[result.method])}
      </p>
    </div>
  );
}
