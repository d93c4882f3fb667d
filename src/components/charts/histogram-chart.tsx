import { max, scaleBand, scaleLinear } from 'd3';
import { cx } from '../../lib/cx';
import { linearTicks, trimNumber } from './scales';
import { useChartWidth } from './use-chart-width';

const margin = { top: 10, right: 12, bottom: 30, left: 56 };

/**
 * One bar per cell, in the order given (the caller sorts). With thousands of cells the bars merge into a profile,
 * which is the point: a long flat tail means many cells that hardly any vector uses.
 */
export function HistogramChart({
  title,
  values,
  valueLabel,
  categoryLabel,
  highlight,
  height = 180,
  className,
}: {
  title: string;
  values: number[];
  valueLabel: string;
  categoryLabel: string;
  /** Index of a bar to draw in the accent colour (the codeword the reader is looking at). */
  highlight?: number | null;
  height?: number;
  className?: string;
}) {
  const { ref, width } = useChartWidth<HTMLDivElement>(560);
  const innerWidth = Math.max(100, width - margin.left - margin.right);
  const innerHeight = height - margin.top - margin.bottom;
  const x = scaleBand<number>()
    .domain(values.map((_, i) => i))
    .range([0, innerWidth])
    .paddingInner(values.length > 128 ? 0 : 0.15);
  const y = scaleLinear()
    .domain([0, max(values) || 1])
    .range([innerHeight, 0])
    .nice();
  const ticks = linearTicks(y, 4, '');
  // Below one pixel per bar, bars are drawn at least a pixel wide and overlap; the profile still reads correctly.
  const barWidth = Math.max(1, x.bandwidth());

  return (
    <div ref={ref} className={cx('w-full', className)}>
      <svg role="img" aria-label={title} width={width} height={height} className="block font-sans">
        <g transform={`translate(${margin.left},${margin.top})`}>
          <g aria-hidden="true" className="text-ink-600">
            {ticks.map((t) => (
              <g key={t.value} transform={`translate(0,${y(t.value)})`}>
                <line x2={innerWidth} stroke="var(--color-ink-100)" />
                <text x={-8} dy="0.32em" textAnchor="end" className="num fill-current text-xs">
                  {trimNumber(t.value)}
                </text>
              </g>
            ))}
            <text x={innerWidth / 2} y={innerHeight + 22} textAnchor="middle" className="fill-current text-xs font-medium">
              {categoryLabel}
            </text>
            <text transform={`translate(-44,${innerHeight / 2}) rotate(-90)`} textAnchor="middle" className="fill-current text-xs font-medium">
              {valueLabel}
            </text>
          </g>
          {values.map((value, i) => (
            <rect
              key={i}
              x={x(i)}
              y={y(value)}
              width={barWidth}
              height={innerHeight - y(value)}
              fill={highlight === i ? 'var(--color-ember-500)' : 'var(--color-series-1)'}
              opacity={highlight === null || highlight === undefined || highlight === i ? 1 : 0.75}
            />
          ))}
          <line y1={innerHeight} x2={innerWidth} y2={innerHeight} stroke="var(--color-ink-300)" />
        </g>
      </svg>
    </div>
  );
}
