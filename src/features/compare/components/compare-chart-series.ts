import type { CompareResult, CompareSeries } from '../../../../server/contracts';
import type { RdSeries } from '../../../components/charts/rd-chart';
import { referenceStyles, seriesStyle } from '../../../components/charts/series';
import { CODEC_LABELS } from '../../../components/bd/bd-figures';

/** A series as the legend and the BD table name it: its run, then its structure (curveLabel in the run vocabulary). */
export function seriesName(result: CompareResult, series: CompareSeries): string {
  const run = result.runs.find((r) => r.id === series.runId);
  return `${run?.name ?? `#${series.runId}`} · ${series.label}`;
}

/** Every series of the comparison, run by run, in the order the server lists them. */
export const allSeries = (result: CompareResult): CompareSeries[] => result.runs.flatMap((run) => run.series);

/** What a point is called in read-outs: λ for a λ sweep, b for a fixed-rate structure. */
const pointLabel = (series: CompareSeries, p: CompareSeries['points'][number]) =>
  series.structure === 'entropy-constrained' && p.lambda !== null ? `λ = ${p.lambda} (K = ${p.size})` : `b = ${p.bits}`;

/**
 * Chart series: one curve per structure of each run (its own hue and dash), then one curve per codec and held-out
 * list (runs on the same images share it).
 */
export function compareChartSeries(result: CompareResult): RdSeries[] {
  const series: RdSeries[] = allSeries(result).map((s, i) => {
    const style = seriesStyle(i + 1);
    return {
      id: `series-${s.id}`,
      label: seriesName(result, s),
      kind: 'vq',
      color: style.color,
      dash: style.dash,
      points: s.points.map((p) => ({ x: p.bpp, y: p.psnr, label: pointLabel(s, p), target: String(p.codebookId) })),
    };
  });
  const seen = new Set<string>();
  for (const run of result.runs) {
    if (seen.has(run.heldOutHash)) continue;
    seen.add(run.heldOutHash);
    for (const codec of ['jpeg', 'webp', 'avif'] as const) {
      const points = run.baselines[codec];
      if (points.length === 0) continue;
      series.push({
        id: `${codec}-${run.heldOutHash.slice(0, 8)}`,
        label: result.heldOutMismatch ? `${CODEC_LABELS[codec]} (images of ${run.name})` : CODEC_LABELS[codec],
        kind: 'reference',
        color: referenceStyles[codec].color,
        dash: referenceStyles[codec].dash,
        marker: referenceStyles[codec].marker,
        points: points.map((p) => ({ x: p.bpp, y: p.psnr, label: `quality ${p.quality}` })),
      });
    }
  }
  return series;
}
