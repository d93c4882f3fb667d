import { max, scaleBand, scaleLinear } from 'd3';
import { cx } from '../../lib/cx';
import { linearTicks, trimNumber } from './scales';
import { useChartWidth } from './use-chart-width';

const margin = { top: 10, right: 12, bottom: 30, left: 56 };

/** One drawn bar: the cells first…last (inclusive) and the value it stands for. */
export interface HistogramColumn {
  first: number;
  last: number;
  value: number;
}

/**
 * The bars to draw for `values` across `columns` pixel columns: one per cell while each gets a pixel or more,
 * otherwise one per pixel column standing for the largest value of the cells that fall in it, which is what
 * overlapping one-pixel bars would show, at a few hundred SVG nodes instead of one per cell.
 */
export function histogramColumns(values: readonly number[], columns: number): HistogramColumn[] {
  const n = values.length;
  if (n <= columns) return values.map((value, i) => ({ first: i, last: i, value }));
  const out: HistogramColumn[] = [];
  for (let c = 0; c < columns; c++) {
    const first = Math.floor((c * n) / columns);
    const last = Math.floor(((c + 1) * n) / columns) - 1;
    let value = values[first];
    for (let i = first + 1; i <= last; i++) if (values[i] > value) value = values[i];
    out.push({ first, last, value });
  }
  return out;
}

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
  const bars = histogramColumns(values, Math.floor(innerWidth));
  const x = scaleBand<number>()
    .domain(bars.map((_, i) => i))
    .range([0, innerWidth])
    .paddingInner(bars.length > 128 ? 0 : 0.15);
  const y = scaleLinear()
    .domain([0, max(values) || 1])
    .range([innerHeight, 0])
    .nice();
  const ticks = linearTicks(y, 4, '');
  const barWidth = Math.max(1, x.bandwidth());
  const highlighted = highlight === null || highlight === undefined ? -1 : bars.findIndex((b) => b.first <= highlight && highlight <= b.last);

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
          {bars.map((bar, i) => (
            <rect
              key={i}
              x={x(i)}
              y={y(bar.value)}
              width={barWidth}
              height={innerHeight - y(bar.value)}
              fill={highlighted === i ? 'var(--color-ember-500)' : 'var(--color-series-1)'}
              opacity={highlighted < 0 || highlighted === i ? 1 : 0.75}
            />
          ))}
          {highlighted >= 0 && bars[highlighted].first !== bars[highlighted].last && (
            // A column stands for several cells: the one looked at is drawn with its own value.
            <rect
              data-highlight=""
              x={x(highlighted)}
              y={y(values[highlight!])}
              width={barWidth}
              height={innerHeight - y(values[highlight!])}
              fill="var(--color-ember-500)"
            />
          )}
          <line y1={innerHeight} x2={innerWidth} y2={innerHeight} stroke="var(--color-ink-300)" />
        </g>
      </svg>
    </div>
  );
}
