import { useState } from 'react';
import { BD_METHOD_LABELS, type CompareResult } from '../../../../server/contracts';
import { bdFootnote, BdRows, CODEC_LABELS } from '../../../components/bd/bd-figures';
import { SelectField } from '../../../components/ui/field';
import { allSeries, seriesName } from './compare-chart-series';

const EVERY = 'every';

/**
 * Bjøntegaard deltas (VCEG-M33, 2001) for every structure's curve of every run: against another curve on the same
 * images, and against JPEG, WebP and AVIF on its run's held-out images, each averaged only over the interval both
 * curves cover (shown beside it). The curve pairs shown are those against one reference curve (the first run's first
 * curve unless another is chosen), or every ordered pair. A value the server could not compute is shown as a dash with
 * its reason (too few points, different held-out images); a figure on a short shared interval carries a warning.
 */
export function BdTable({ result }: { result: CompareResult }) {
  const series = allSeries(result);
  const name = new Map(series.map((s) => [s.id, seriesName(result, s)]));
  const [chosen, setChosen] = useState<string | null>(null);
  const reference = chosen !== null && (chosen === EVERY || name.has(chosen)) ? chosen : (series[0]?.id ?? EVERY);
  const rows = [
    ...result.seriesPairs
      .filter((pair) => reference === EVERY || pair.reference === reference)
      .map((pair) => ({
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
    <div className="flex flex-col gap-3">
      {series.length > 2 && (
        <SelectField label="Reference curve" value={reference} onChange={(event) => setChosen(event.target.value)} containerClassName="w-full max-w-xl">
          {series.map((s) => (
            <option key={s.id} value={s.id}>
              {name.get(s.id)}
            </option>
          ))}
          <option value={EVERY}>Every curve against every other</option>
        </SelectField>
      )}
      <div className="overflow-x-auto">
        <BdRows rows={rows} caption="BD-rate and BD-PSNR of each compared run's curves, one per structure, against its reference" />
      </div>
      <p className="text-xs text-ink-600" data-testid="bd-method">
        {bdFootnote(BD_METHOD_LABELS[result.method])}
      </p>
    </div>
  );
}
