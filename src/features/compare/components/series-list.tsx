import type { CompareResult } from '../../../../server/contracts';
import { cx } from '../../../lib/cx';
import { allSeries } from './compare-chart-series';

/**
 * The curves on the chart, one per structure of each run: how many codebooks each has, and whether it has the points
 * a Bjøntegaard figure needs. A curve short of them is drawn, and its figures are left out with this reason.
 */
export function SeriesList({ result }: { result: CompareResult }) {
  return (
    <div className="overflow-x-auto">
      <table className="w-full border-collapse text-left text-sm">
        <caption className="sr-only">Curves compared, one per structure of each run</caption>
        <thead>
          <tr className="border-b border-ink-200 text-xs tracking-[0.06em] text-ink-600 uppercase">
            <th scope="col" className="py-2 pr-3 font-medium">Run</th>
            <th scope="col" className="py-2 pr-3 font-medium">Structure</th>
            <th scope="col" className="py-2 pr-3 text-right font-medium">Codebooks</th>
            <th scope="col" className="py-2 font-medium">BD figures</th>
          </tr>
        </thead>
        <tbody>
          {allSeries(result).map((series) => (
            // The structure's name is the run vocabulary's (curveLabel), as in the legend and the BD table.
            <tr key={series.id} className="border-b border-ink-100 last:border-b-0" data-testid="compare-series" data-structure={series.structure}>
              <th scope="row" className="py-1.5 pr-3 font-medium text-ink-900">{result.runs.find((run) => run.id === series.runId)?.name ?? `#${series.runId}`}</th>
              <td className="py-1.5 pr-3 text-ink-700" data-testid="series-structure">{series.label}</td>
              <td className="num py-1.5 pr-3 text-right text-ink-700">{series.points.length}</td>
              <td className={cx('py-1.5 text-xs', series.enoughPoints ? 'text-ink-600' : 'text-danger-700')} data-testid="series-bd-state">
                {series.enoughPoints
                  ? `${series.usablePoints} usable points`
                  : `not enough points: ${series.usablePoints} usable of the ${result.bdMinPoints} a BD figure needs`}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}
