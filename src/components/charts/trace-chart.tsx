import { line, scaleLinear } from 'd3';
import { useMemo } from 'react';
import { cx } from '../../lib/cx';
import { decadeTicks, formatWithUnit, linearTicks, logDistortionScale, trimNumber } from './scales';
import { seriesStyle } from './series';
import { useChartWidth } from './use-chart-width';

export type TraceStep = {
  /** Codebook size trained in this step. */
  size: number;
  iteration: number;
  /** MSE per vector component. */
  distortion: number;
};

const margin = { top: 14, right: 16, bottom: 40, left: 60 };

/**
 * The convergence trace: distortion after every Lloyd iteration, in the order they ran, on a log axis. An LBG sweep
 * visits sizes 1, 2, 4, … in turn; each size is its own segment, styled as its own series, with a divider and the
 * size written where it starts.
 */
export function TraceChart({ title, steps, height = 240, className }: { title: string; steps: TraceStep[]; height?: number; className?: string }) {
  const { ref, width } = useChartWidth<HTMLDivElement>(640);
  const innerWidth = Math.max(120, width - margin.left - margin.right);
  const innerHeight = height - margin.top - margin.bottom;

  const segments = useMemo(() => {
    const out: Array<{ size: number; start: number; steps: Array<TraceStep & { at: number }> }> = [];
    steps.forEach((step, at) => {
      const last = out[out.length - 1];
      if (!last || last.size !== step.size) out.push({ size: step.size, start: at, steps: [{ ...step, at }] });
      else last.steps.push({ ...step, at });
    });
    return out;
  }, [steps]);

  const x = scaleLinear().domain([0, Math.max(1, steps.length - 1)]).range([0, innerWidth]);
  const y = logDistortionScale(steps.map((s) => s.distortion), [innerHeight, 0]);
  const path = line<TraceStep & { at: number }>()
    .defined((s) => s.distortion > 0)
    .x((s) => x(s.at))
    .y((s) => y(s.distortion));
  const yTicks = decadeTicks(y);
  const xTicks = linearTicks(x, Math.max(2, Math.floor(innerWidth / 80)), '').filter((t) => Number.isInteger(t.value));
  // A size label is written only where it clears the previous one, so short early segments do not pile up.
  const labelled = new Set<number>();
  let lastLabelX = -Infinity;
  segments.forEach((segment, i) => {
    const at = x(segment.steps[0].at);
    if (at - lastLabelX >= 8 + 7 * String(segment.size).length + 14) {
      labelled.add(i);
      lastLabelX = at;
    }
  });

  return (
    <div ref={ref} className={cx('w-full', className)}>
      <svg role="img" aria-label={title} width={width} height={height} className="block font-sans">
        <g transform={`translate(${margin.left},${margin.top})`}>
          <g aria-hidden="true" className="text-ink-600">
            {yTicks.map((t) => (
              <g key={t.value} data-tick={t.value} transform={`translate(0,${y(t.value)})`}>
                <line x2={innerWidth} stroke="var(--color-ink-100)" />
                <text x={-8} dy="0.32em" textAnchor="end" className="num fill-current text-xs">
                  {t.label}
                </text>
              </g>
            ))}
            {xTicks.map((t) => (
              <text key={t.value} x={x(t.value)} y={innerHeight + 16} textAnchor="middle" className="num fill-current text-xs">
                {t.label}
              </text>
            ))}
            <line y1={innerHeight} x2={innerWidth} y2={innerHeight} stroke="var(--color-ink-300)" />
            <text x={innerWidth / 2} y={innerHeight + 34} textAnchor="middle" className="fill-current text-xs font-medium">
              Lloyd iteration (all sizes in order)
            </text>
            <text transform={`translate(-46,${innerHeight / 2}) rotate(-90)`} textAnchor="middle" className="fill-current text-xs font-medium">
              MSE per component (log)
            </text>
          </g>
          {segments.map((segment, i) => {
            const style = seriesStyle(i + 1);
            const first = segment.steps[0];
            const last = segment.steps[segment.steps.length - 1];
            return (
              <g key={`${segment.size}-${segment.start}`} data-size={segment.size}>
                {i > 0 && <line x1={x(first.at)} x2={x(first.at)} y2={innerHeight} stroke="var(--color-ink-200)" strokeDasharray="2 3" aria-hidden="true" />}
                {labelled.has(i) && (
                  <text x={x(first.at) + 3} y={10} className="num fill-ink-600 text-xs" aria-hidden="true">
                    K={segment.size}
                  </text>
                )}
                <path
                  d={path(segment.steps) ?? undefined}
                  fill="none"
                  stroke={style.color}
                  strokeWidth={1.75}
                  strokeDasharray={style.dash === 'none' ? undefined : style.dash}
                  aria-hidden="true"
                />
                {last.distortion > 0 && (
                  <circle cx={x(last.at)} cy={y(last.distortion)} r={2.5} fill={style.color}>
                    <title>{`K = ${segment.size}: ${trimNumber(last.distortion)} after ${segment.steps.length} iteration${segment.steps.length === 1 ? '' : 's'}`}</title>
                  </circle>
                )}
              </g>
            );
          })}
        </g>
      </svg>
      <p className="sr-only">
        {segments
          .map((s) => `K = ${s.size}: ${formatWithUnit(s.steps[s.steps.length - 1].distortion, '', 3)} after ${s.steps.length} iterations`)
          .join('; ')}
      </p>
    </div>
  );
}
