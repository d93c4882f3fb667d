import { Link } from 'react-router-dom';
import type { RunSummary } from '../../../../server/contracts';
import { href } from '../../../config/routes';
import { formatDateTime } from '../../../lib/format';
import { formatBpp, formatDb } from '../format';
import { RunStateBadge } from './run-state-badge';

export function RunsTable({ teamId, runs }: { teamId: number; runs: RunSummary[] }) {
  return (
    <table className="w-full border-collapse text-left text-base">
      <caption className="sr-only">Training runs of this team, newest first</caption>
      <thead>
        <tr className="border-b border-ink-200 text-xs tracking-[0.06em] text-ink-600 uppercase">
          <th scope="col" className="py-2 pr-4 font-medium">Run</th>
          <th scope="col" className="py-2 pr-4 font-medium">State</th>
          <th scope="col" className="w-40 py-2 pr-4 font-medium">Progress</th>
          <th scope="col" className="py-2 pr-4 text-right font-medium">Best PSNR</th>
          <th scope="col" className="py-2 pr-4 text-right font-medium">at rate</th>
          <th scope="col" className="py-2 font-medium">Created</th>
        </tr>
      </thead>
      <tbody>
        {runs.map((run) => (
          <tr key={run.id} className="border-b border-ink-100 last:border-b-0">
            <td className="py-3 pr-4">
              <Link to={href.teamRun(teamId, run.id)} className="font-medium text-ink-950 hover:text-ember-700 hover:underline">
                {run.name}
              </Link>
              <p className="text-sm text-ink-600">
                #{run.id}
                {run.createdBy && ` · ${run.createdBy.name}`}
              </p>
            </td>
            <td className="py-3 pr-4">
              <RunStateBadge state={run.state} />
            </td>
            <td className="py-3 pr-4">
              <div className="flex items-center gap-2">
                <div className="h-1.5 flex-1 overflow-hidden rounded-full bg-ink-200" role="progressbar" aria-label={`Progress of ${run.name}`} aria-valuemin={0} aria-valuemax={100} aria-valuenow={Math.round(run.progress * 100)}>
                  <div className="h-full bg-ink-800" style={{ width: `${run.progress * 100}%` }} />
                </div>
                <span className="num w-10 text-right text-xs text-ink-600">{Math.round(run.progress * 100)} %</span>
              </div>
            </td>
            <td className="num py-3 pr-4 text-right">{run.bestOperatingPoint ? formatDb(run.bestOperatingPoint.psnr) : '—'}</td>
            <td className="num py-3 pr-4 text-right text-ink-700">{run.bestOperatingPoint ? formatBpp(run.bestOperatingPoint.bpp) : '—'}</td>
            <td className="num py-3 text-sm text-ink-700">{formatDateTime(run.createdAt)}</td>
          </tr>
        ))}
      </tbody>
    </table>
  );
}
