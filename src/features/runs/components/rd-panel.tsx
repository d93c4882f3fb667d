import { useId, useState } from 'react';
import type { BaselineCodecName, RunCurve } from '../../../../server/contracts';
import { focusedExtents, RdChart, type RdSeries } from '../../../components/charts/rd-chart';
import { referenceStyles, seriesStyle } from '../../../components/charts/series';
import type { Unit } from '../../../components/charts/scales';

export type QualityMetric = 'psnr' | 'mse' | 'ssim';

export const qualityMetrics: Record<QualityMetric, { label: string; unit: Unit; digits: number }> = {
  psnr: { label: 'PSNR', unit: 'dB', digits: 2 },
  mse: { label: 'MSE', unit: '', digits: 1 },
  ssim: { label: 'SSIM', unit: '', digits: 4 },
};

const rateDefinitions = [
  { key: 'bppFixed', id: 'fixed', label: 'VQ · fixed rate', style: 1 },
  { key: 'bppEntropy', id: 'entropy', label: 'VQ · entropy rate', style: 2 },
  { key: 'bppActual', id: 'actual', label: 'VQ · actual (container)', style: 3 },
  { key: 'bppRaw', id: 'raw', label: 'VQ · raw (fixed-rate container)', style: 4 },
] as const;

const codecLabels: Record<BaselineCodecName, string> = { jpeg: 'JPEG', webp: 'WebP', avif: 'AVIF' };

/** An entropy-constrained run's λ sweep: its own curve, on the entropy rate and on the Huffman-coded files' rate. */
const lambdaDefinitions = [
  { key: 'bppEntropy', id: 'ecvq-entropy', label: 'Entropy-constrained · entropy rate', style: 5 },
  { key: 'bppActual', id: 'ecvq-actual', label: 'Entropy-constrained · actual (Huffman-coded)', style: 6 },
] as const;

/**
 * Chart series of a run's curve: four rate definitions of the full-search codebooks, the λ sweep of its
 * entropy-constrained codebooks (when it has one) as a curve of its own, then every reference codec measured.
 */
export function curveSeries(curve: RunCurve, metric: QualityMetric): RdSeries[] {
  const points = curve.points.filter((p) => p.structure === 'full').sort((a, b) => a.bits - b.bits);
  const swept = curve.points.filter((p) => p.structure === 'entropy-constrained').sort((a, b) => (b.lambda ?? 0) - (a.lambda ?? 0));
  const lambdaSeries: RdSeries[] = swept.length === 0 ? [] : lambdaDefinitions.map((definition) => {
    const style = seriesStyle(definition.style);
    return {
      id: definition.id,
      label: definition.label,
      kind: 'vq',
      color: style.color,
      dash: style.dash,
      points: swept.map((p) => ({ x: p[definition.key], y: p[metric], label: `λ = ${p.lambda} (K = ${p.size})`, target: String(p.codebookId) })),
    };
  });
  const vq: RdSeries[] = rateDefinitions.map((definition) => {
    const style = seriesStyle(definition.style);
    return {
      id: definition.id,
      label: definition.label,
      kind: 'vq',
      color: style.color,
      dash: style.dash,
      points: points.map((p) => ({ x: p[definition.key], y: p[metric], label: `b = ${p.bits} (K = ${p.size})`, target: String(p.codebookId) })),
    };
  });
  const references: RdSeries[] = (Object.keys(codecLabels) as BaselineCodecName[])
    .filter((codec) => curve.baselines[codec].length > 0)
    .map((codec) => ({
      id: codec,
      label: codecLabels[codec],
      kind: 'reference',
      color: referenceStyles[codec].color,
      dash: referenceStyles[codec].dash,
      marker: referenceStyles[codec].marker,
      points: curve.baselines[codec].map((p) => ({ x: p.bpp, y: p[metric], label: `quality ${p.quality}` })),
    }));
  return [...vq, ...lambdaSeries, ...references];
}

export function RdPanel({ curve, onOpenCodebook }: { curve: RunCurve; onOpenCodebook: (codebookId: number) => void }) {
  const [metric, setMetric] = useState<QualityMetric>('psnr');
  const [fullRange, setFullRange] = useState(false);
  const groupId = useId();
  const chosen = qualityMetrics[metric];
  const series = curveSeries(curve, metric);
  const focused = fullRange ? null : focusedExtents(series);
  return (
    <div className="flex flex-col gap-3">
      <fieldset className="flex flex-wrap items-center gap-3">
        <legend className="sr-only">Measure</legend>
        <span id={groupId} className="text-sm text-ink-700">
          Measure
        </span>
        <div className="inline-flex rounded-md border border-ink-300 bg-surface p-0.5" role="radiogroup" aria-labelledby={groupId}>
          {(Object.keys(qualityMetrics) as QualityMetric[]).map((key) => (
            <label
              key={key}
              className="cursor-pointer rounded-sm px-3 py-1 text-sm text-ink-700 has-checked:bg-ink-800 has-checked:text-white has-focus-visible:outline-2 has-focus-visible:outline-focus"
            >
              <input type="radio" name={`${groupId}-metric`} value={key} checked={metric === key} onChange={() => setMetric(key)} className="sr-only" />
              {qualityMetrics[key].label}
            </label>
          ))}
        </div>
        <label className="ml-auto flex items-center gap-2 text-sm text-ink-700">
          <input type="checkbox" className="size-4 accent-ink-800" checked={fullRange} onChange={(event) => setFullRange(event.target.checked)} />
          Full reference-codec range
        </label>
      </fieldset>
      <RdChart
        title={`Rate–distortion: ${chosen.label} against bits per pixel`}
        series={series}
        xExtent={focused?.x}
        yExtent={focused?.y}
        yLabel={chosen.label}
        yUnit={chosen.unit}
        yDigits={chosen.digits}
        onSelectPoint={(point) => point.target && onOpenCodebook(Number(point.target))}
      />
    </div>
  );
}
