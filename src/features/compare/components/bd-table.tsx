import { BD_METHOD_LABELS, type CompareResult } from '../../../../server/contracts';
import { bdFootnote, BdRows, CODEC_LABELS } from '../../../components/bd/bd-figures';

/**
 * Bjøntegaard deltas (VCEG-M33, 2001) for every pair and for each run against JPEG, WebP and AVIF on its own held-out
 * images, each averaged only over the interval both curves cover (shown beside it). A value the server could not
 * compute is shown as a dash with its reason; a figure on a short shared interval carries a warning.
 */
export function BdTable({ result }: { result: CompareResult }) {
  const name = new Map(result.runs.map((run) => [run.id, run.name]));
  const rows = [
    ...result.pairs.map((pair) => ({
      ...pair,
      key: `${pair.reference}-${pair.test}`,
      referenceName: name.get(pair.reference) ?? `#${pair.reference}`,
      testName: name.get(pair.test) ?? `#${pair.test}`,
    })),
    ...result.againstBaselines.map((row) => ({
      ...row,
      key: `${row.codec}-${row.runId}`,
      referenceName: `${CODEC_LABELS[row.codec]} (same images)`,
      testName: name.get(row.runId) ?? `#${row.runId}`,
    })),
  ];
  return (
    <div className="overflow-x-auto">
      <BdRows rows={rows} caption="BD-rate and BD-PSNR of each compared run against its reference" />
      <p className="mt-3 text-xs text-ink-600" data-testid="bd-method">
        {bdFootnote(BD_METHOD_LABELS[result.method])}
      </p>
    </div>
  );
}
