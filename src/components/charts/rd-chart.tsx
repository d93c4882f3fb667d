import { line } from 'd3';
import { useId, useMemo, useState, type KeyboardEvent, type PointerEvent } from 'react';
import { cx } from '../../lib/cx';
import { bppScale, finiteExtent, formatWithUnit, linearTicks, qualityScale, type Unit } from './scales';
import { useChartWidth } from './use-chart-width';

export type RdPoint = {
  x: number;
  /** null (e.g. PSNR of an exact reconstruction) leaves a gap instead of an invented value. */
  y: number | null;
  /** Names the point in read-outs ("b = 4", "q 75"). */
  label: string;
  /** Set on points that open something (a codebook); the chart then makes them focusable links. */
  target?: string;
};

export type RdSeries = {
  id: string;
  label: string;
  /** VQ curves carry the hues; reference codecs are drawn thinner, in ink, with square-ish markers. */
  kind: 'vq' | 'reference';
  color: string;
  dash: string;
  marker?: 'circle' | 'square' | 'diamond' | 'triangle';
  points: RdPoint[];
};

export type RdChartProps = {
  /** Accessible name of the figure. */
  title: string;
  series: RdSeries[];
  xLabel?: string;
  xUnit?: Unit;
  yLabel: string;
  yUnit: Unit;
  /** Digits in read-outs of y (PSNR 2, SSIM 4, MSE 1). */
  yDigits?: number;
  /** Fixed axes (compare puts every run on the same ones); otherwise taken from the points. */
  xExtent?: [number, number] | null;
  yExtent?: [number, number] | null;
  height?: number;
  onSelectPoint?: (point: RdPoint, series: RdSeries) => void;
  className?: string;
};

/**
 * Reference codecs are measured up to high qualities (several bpp) while VQ sweeps usually stay below 1 bpp; on the
 * full range the VQ curves shrink into a corner. The focused view spans the VQ rates with room on the right, and the
 * quality range of every point inside it. Lines beyond the frame are clipped, not dropped.
 */
export function focusedExtents(series: RdSeries[]): { x: [number, number]; y: [number, number] } | null {
  const vq = series.filter((s) => s.kind === 'vq').flatMap((s) => s.points);
  const xs = finiteExtent(vq.map((p) => p.x));
  if (!xs) return null;
  const right = xs[1] * 1.6;
  const inside = series.flatMap((s) => s.points).filter((p) => p.x <= right);
  const ys = finiteExtent(inside.map((p) => p.y));
  return ys ? { x: [0, right], y: ys } : null;
}

const margin = { top: 16, right: 20, bottom: 46, left: 64 };

type Located = { series: RdSeries; point: RdPoint; px: number; py: number };

/**
 * Rate–distortion chart: quality against bits per pixel, one path per series with its own dash, a marker per point,
 * a hover (and keyboard focus) read-out of the nearest point, and points that open what they stand for.
 */
export function RdChart({
  title,
  series,
  xLabel = 'Rate',
  xUnit = 'bpp',
  yLabel,
  yUnit,
  yDigits = 2,
  xExtent,
  yExtent,
  height = 340,
  onSelectPoint,
  className,
}: RdChartProps) {
  const { ref, width } = useChartWidth<HTMLDivElement>(720);
  const clipId = useId();
  const [hover, setHover] = useState<Located | null>(null);
  const innerWidth = Math.max(120, width - margin.left - margin.right);
  const innerHeight = height - margin.top - margin.bottom;

  const { x, y } = useMemo(() => {
    const all = series.flatMap((s) => s.points);
    const xe = xExtent ?? finiteExtent(all.map((p) => p.x)) ?? [0, 1];
    const ye = yExtent ?? finiteExtent(all.map((p) => p.y)) ?? [0, 1];
    return { x: bppScale(xe, [0, innerWidth]), y: qualityScale(ye, [innerHeight, 0]) };
  }, [series, xExtent, yExtent, innerWidth, innerHeight]);

  const located = useMemo<Located[]>(
    () =>
      series.flatMap((s) =>
        s.points
          .filter((p) => p.y !== null && Number.isFinite(p.y))
          .map((p) => ({ series: s, point: p, px: x(p.x), py: y(p.y as number) }))
          // Points outside a focused frame are clipped from view, so they must not stay focusable either.
          .filter((p) => p.px >= -1 && p.px <= innerWidth + 1 && p.py >= -1 && p.py <= innerHeight + 1),
      ),
    [series, x, y, innerWidth, innerHeight],
  );

  const path = line<RdPoint>()
    .defined((p) => p.y !== null && Number.isFinite(p.y))
    .x((p) => x(p.x))
    .y((p) => y(p.y as number));

  const xTicks = linearTicks(x, Math.max(2, Math.floor(innerWidth / 90)), xUnit);
  const yTicks = linearTicks(y, 6, yUnit);

  const onPointerMove = (event: PointerEvent<SVGRectElement>) => {
    const box = event.currentTarget.getBoundingClientRect();
    const mx = event.clientX - box.left;
    const my = event.clientY - box.top;
    let best: Located | null = null;
    let bestDistance = Infinity;
    for (const candidate of located) {
      const d = (candidate.px - mx) ** 2 + (candidate.py - my) ** 2;
      if (d < bestDistance) {
        best = candidate;
        bestDistance = d;
      }
    }
    // Beyond ~40 px the nearest point is not what the reader is pointing at.
    setHover(best && bestDistance < 40 * 40 ? best : null);
  };

  const onPointKey = (event: KeyboardEvent, item: Located) => {
    if (event.key === 'Enter' || event.key === ' ') {
      event.preventDefault();
      onSelectPoint?.(item.point, item.series);
    }
  };

  const readout = hover && (
    <div
      role="status"
      className="pointer-events-none absolute z-10 min-w-36 rounded-md border border-ink-200 bg-surface px-2.5 py-1.5 text-xs shadow-pop"
      style={{
        left: Math.min(margin.left + hover.px + 12, width - 170),
        top: Math.max(0, margin.top + hover.py - 52),
      }}
    >
      <p className="font-medium text-ink-900">
        {hover.series.label} · {hover.point.label}
      </p>
      <p className="num text-ink-700">{formatWithUnit(hover.point.x, xUnit, 3)}</p>
      <p className="num text-ink-700">
        {yLabel} {formatWithUnit(hover.point.y as number, yUnit, yDigits)}
      </p>
      {hover.point.target && <p className="text-ink-600">Click to open</p>}
    </div>
  );

  return (
    <figure className={cx('flex flex-col gap-3', className)}>
      <div ref={ref} className="relative w-full">
        <svg role="img" aria-label={title} width={width} height={height} className="block overflow-visible font-sans">
          <defs>
            <clipPath id={clipId}>
              <rect x={-4} y={-4} width={innerWidth + 8} height={innerHeight + 8} />
            </clipPath>
          </defs>
          <g transform={`translate(${margin.left},${margin.top})`}>
            <g aria-hidden="true" className="text-ink-600">
              {yTicks.map((t) => (
                <g key={`y${t.value}`} transform={`translate(0,${y(t.value)})`}>
                  <line x2={innerWidth} stroke="var(--color-ink-100)" />
                  <text x={-8} dy="0.32em" textAnchor="end" className="num fill-current text-xs">
                    {t.label}
                  </text>
                </g>
              ))}
              {xTicks.map((t) => (
                <g key={`x${t.value}`} transform={`translate(${x(t.value)},${innerHeight})`}>
                  <line y2={5} stroke="var(--color-ink-300)" />
                  <text y={18} textAnchor="middle" className="num fill-current text-xs">
                    {t.label}
                  </text>
                </g>
              ))}
              <line y1={innerHeight} x2={innerWidth} y2={innerHeight} stroke="var(--color-ink-300)" />
              <text x={innerWidth / 2} y={innerHeight + 40} textAnchor="middle" className="fill-current text-xs font-medium">
                {xLabel} ({xUnit})
              </text>
              <text transform={`translate(${-50},${innerHeight / 2}) rotate(-90)`} textAnchor="middle" className="fill-current text-xs font-medium">
                {yUnit ? `${yLabel} (${yUnit})` : yLabel}
              </text>
            </g>
            {/* Hover layer first in document order, so the markers drawn after it stay on top and clickable. */}
            <rect
              width={innerWidth}
              height={innerHeight}
              fill="transparent"
              onPointerMove={onPointerMove}
              onPointerLeave={() => setHover(null)}
              aria-hidden="true"
            />
            <g clipPath={`url(#${clipId})`}>
              {series.map((s) => (
                <path
                  key={s.id}
                  data-series={s.id}
                  d={path(s.points) ?? undefined}
                  fill="none"
                  stroke={s.color}
                  strokeWidth={s.kind === 'vq' ? 2 : 1.5}
                  strokeDasharray={s.dash === 'none' ? undefined : s.dash}
                  strokeLinejoin="round"
                  strokeLinecap="round"
                  pointerEvents="none"
                  aria-hidden="true"
                />
              ))}
              {located.map((item) => {
                const focusable = Boolean(onSelectPoint && item.point.target);
                const name = `${item.series.label}, ${item.point.label}: ${formatWithUnit(item.point.x, xUnit, 3)}, ${formatWithUnit(item.point.y as number, yUnit, yDigits)}`;
                return (
                  <g
                    key={`${item.series.id}-${item.point.label}-${item.point.x}`}
                    data-point={item.series.id}
                    transform={`translate(${item.px},${item.py})`}
                    role={focusable ? 'link' : undefined}
                    tabIndex={focusable ? 0 : undefined}
                    aria-label={focusable ? `Open ${name}` : undefined}
                    className={cx(focusable && 'cursor-pointer outline-none [&:focus-visible>.ring]:opacity-100')}
                    onClick={focusable ? () => onSelectPoint?.(item.point, item.series) : undefined}
                    onKeyDown={focusable ? (event) => onPointKey(event, item) : undefined}
                    onPointerEnter={() => setHover(item)}
                    onFocus={() => setHover(item)}
                    onBlur={() => setHover(null)}
                  >
                    <circle className="ring opacity-0" r={9} fill="none" stroke="var(--color-focus)" strokeWidth={2} />
                    <Marker shape={item.series.marker ?? 'circle'} color={item.series.color} emphasised={hover === item} />
                  </g>
                );
              })}
            </g>
          </g>
        </svg>
        {readout}
      </div>
      <figcaption>
        <ul className="flex flex-wrap gap-x-5 gap-y-1.5 text-sm text-ink-700" aria-label="Legend">
          {series.map((s) => (
            <li key={s.id} className="flex items-center gap-2">
              <svg aria-hidden="true" width="30" height="10">
                <line x1="1" y1="5" x2="29" y2="5" stroke={s.color} strokeWidth={s.kind === 'vq' ? 2 : 1.5} strokeDasharray={s.dash === 'none' ? undefined : s.dash} />
                <g transform="translate(15,5)">
                  <Marker shape={s.marker ?? 'circle'} color={s.color} />
                </g>
              </svg>
              {s.label}
            </li>
          ))}
        </ul>
      </figcaption>
    </figure>
  );
}

function Marker({ shape, color, emphasised = false }: { shape: NonNullable<RdSeries['marker']>; color: string; emphasised?: boolean }) {
  const r = emphasised ? 5 : 3.5;
  const common = { fill: 'var(--color-surface)', stroke: color, strokeWidth: emphasised ? 2.5 : 1.75 };
  if (shape === 'square') return <rect x={-r} y={-r} width={2 * r} height={2 * r} {...common} />;
  if (shape === 'diamond') return <path d={`M0 ${-r * 1.3}L${r * 1.3} 0L0 ${r * 1.3}L${-r * 1.3} 0Z`} {...common} />;
  if (shape === 'triangle') return <path d={`M0 ${-r * 1.3}L${r * 1.2} ${r}L${-r * 1.2} ${r}Z`} {...common} />;
  return <circle r={r} {...common} fill={color} stroke="var(--color-surface)" strokeWidth={1.25} />;
}
