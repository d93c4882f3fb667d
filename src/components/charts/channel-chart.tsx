import { line, scaleLinear, scaleLog } from 'd3';
import { cx } from '../../lib/cx';
import { decadeTicks, finiteExtent, linearTicks, paddedDomain, trimNumber } from './scales';
import { seriesStyle } from './series';
import { useChartWidth } from './use-chart-width';

const margin = { top: 12, right: 16, bottom: 36, left: 56 };

/** One rate of the curve: PSNR measured (mean MSE over seeds) and expected from the closed form (null when not computed). */
export interface ChannelChartPoint {
  ber: number;
  measured: number | null;
  expected: number | null;
}

/**
 * PSNR against bit-error rate on a log axis: the measured curve (solid, with points) and the closed form's expected
 * curve (dashed). An exact reconstruction's PSNR (null) is left out of the drawing, as on the RD charts.
 */
export function ChannelChart({ title, points, height = 240, className }: { title: string; points: ChannelChartPoint[]; height?: number; className?: string }) {
  const { ref, width } = useChartWidth<HTMLDivElement>(560);
  const innerWidth = Math.max(120, width - margin.left - margin.right);
  const innerHeight = height - margin.top - margin.bottom;
  const bers = points.map((p) => p.ber);
  const x = scaleLog()
    .domain([Math.min(...bers) / 1.5, Math.max(...bers) * 1.5])
    .range([0, innerWidth]);
  const extent = finiteExtent(points.flatMap((p) => [p.measured, p.expected])) ?? [0, 1];
  const y = scaleLinear().domain(paddedDomain(extent, 0.08)).range([innerHeight, 0]).nice();
  const path = (key: 'measured' | 'expected') =>
    line<ChannelChartPoint>()
      .defined((p) => p[key] !== null && Number.isFinite(p[key]))
      .x((p) => x(p.ber))
      .y((p) => y(p[key] as number))(points) ?? '';
  const measuredStyle = seriesStyle(1);
  const expectedStyle = seriesStyle(2);
  const hasExpected = points.some((p) => p.expected !== null);

  return (
    <div ref={ref} className={cx('w-full', className)}>
      <svg role="img" aria-label={title} width={width} height={height} className="block font-sans">
        <g transform={`translate(${margin.left},${margin.top})`}>
          <g aria-hidden="true" className="text-ink-600">
            {linearTicks(y, 5, 'dB').map((t) => (
              <g key={t.value} transform={`translate(0,${y(t.value)})`}>
                <line x2={innerWidth} stroke="var(--color-ink-100)" />
                <text x={-8} dy="0.32em" textAnchor="end" className="num fill-current text-xs">
                  {trimNumber(t.value)}
                </text>
              </g>
            ))}
            {decadeTicks(x).map((t) => (
              <g key={t.value} transform={`translate(${x(t.value)},${innerHeight})`}>
                <line y2={5} stroke="var(--color-ink-300)" />
                <text y={18} textAnchor="middle" className="num fill-current text-xs">
                  {t.label}
                </text>
              </g>
            ))}
            <text x={innerWidth / 2} y={innerHeight + 32} textAnchor="middle" className="fill-current text-xs font-medium">
              bit-error rate
            </text>
            <text transform={`translate(-44,${innerHeight / 2}) rotate(-90)`} textAnchor="middle" className="fill-current text-xs font-medium">
              PSNR (dB)
            </text>
          </g>
          <line y1={innerHeight} x2={innerWidth} y2={innerHeight} stroke="var(--color-ink-300)" />
          {hasExpected && <path data-series="expected" d={path('expected')} fill="none" stroke={expectedStyle.color} strokeWidth={1.5} strokeDasharray="5 3" />}
          <path data-series="measured" d={path('measured')} fill="none" stroke={measuredStyle.color} strokeWidth={1.5} />
          {points
            .filter((p) => p.measured !== null && Number.isFinite(p.measured))
            .map((p) => (
              <circle key={p.ber} cx={x(p.ber)} cy={y(p.measured as number)} r={3.5} fill={measuredStyle.color}>
                <title>{`BER ${p.ber}: ${(p.measured as number).toFixed(2)} dB measured${p.expected === null ? '' : `, ${p.expected.toFixed(2)} dB expected`}`}</title>
              </circle>
            ))}
        </g>
      </svg>
      <ul className="mt-1 flex gap-4 text-xs text-ink-700" aria-label="Legend">
        <li className="flex items-center gap-1.5">
          <svg width="20" height="8" aria-hidden="true">
            <line x1="0" y1="4" x2="20" y2="4" stroke={measuredStyle.color} strokeWidth={1.5} />
          </svg>
          measured (mean over seeds)
        </li>
        {hasExpected && (
          <li className="flex items-center gap-1.5">
            <svg width="20" height="8" aria-hidden="true">
              <line x1="0" y1="4" x2="20" y2="4" stroke={expectedStyle.color} strokeWidth={1.5} strokeDasharray="5 3" />
            </svg>
            expected (closed form)
          </li>
        )}
      </ul>
    </div>
  );
}
