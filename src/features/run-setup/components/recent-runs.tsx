import { Link } from 'react-router-dom';
import { EXACT, RUN_STATE_LABELS, terminalJobStates, type JobState, type RunSummary } from '../../../../server/contracts';
import { href } from '../../../config/routes';
import { cx } from '../../../lib/cx';
import { formatDateTime } from '../../../lib/format';
import { formatBpp } from '../format';

/** Shape as well as colour tells the states apart: a ring waiting, a filled dot working, a tick done, a cross failed. */
function StateMark({ state }: { state: JobState }) {
  const common = 'size-3.5 shrink-0';
  if (state === 'succeeded') {
    return (
      <svg aria-hidden="true" viewBox="0 0 14 14" className={cx(common, 'text-success-700')}>
        <path d="m3 7.5 2.5 2.5L11 4.5" fill="none" stroke="currentColor" strokeWidth="2" strokeLinecap="round" strokeLinejoin="round" />
      </svg>
    );
  }
  if (state === 'failed') {
    return (
      <svg aria-hidden="true" viewBox="0 0 14 14" className={cx(common, 'text-danger-600')}>
        <path d="m4 4 6 6M10 4l-6 6" fill="none" stroke="currentColor" strokeWidth="2" strokeLinecap="round" />
      </svg>
    );
  }
  return (
    <svg aria-hidden="true" viewBox="0 0 14 14" className={cx(common, state === 'running' ? 'text-ember-600' : 'text-ink-400')}>
      <circle cx="7" cy="7" r="4.5" fill={state === 'running' ? 'currentColor' : 'none'} stroke="currentColor" strokeWidth="1.6" />
    </svg>
  );
}

/** The newest runs with their state and the best point each reached (highest PSNR on its held-out images). */
export function RecentRuns({ teamId, runs, limit = 6 }: { teamId: number; runs: RunSummary[]; limit?: number }) {
  const newest = [...runs].sort((a, b) => b.createdAt.localeCompare(a.createdAt)).slice(0, limit);
  return (
    <ul aria-label="Recent runs" className="flex flex-col divide-y divide-ink-100">
      {newest.map((run) => {
        const best = run.bestOperatingPoint;
        return (
          <li key={run.id} className="grid grid-cols-[minmax(0,1fr)_auto] items-center gap-x-4 gap-y-1 py-2.5">
            <div className="min-w-0">
              <Link to={href.teamRun(teamId, run.id)} className="block truncate font-medium text-ink-950 hover:text-ember-700 hover:underline">
                {run.name}
              </Link>
              <p className="flex items-center gap-1.5 text-xs text-ink-600">
                <StateMark state={run.state} />
                <span className={cx(run.state === 'failed' && 'font-medium text-danger-700')}>{RUN_STATE_LABELS[run.state]}</span>
                {!terminalJobStates.includes(run.state) && <span className="num">{Math.round(run.progress * 100)} %</span>}
                <span aria-hidden="true">·</span>
                <span className="num">{formatDateTime(run.createdAt)}</span>
                {run.createdBy && <span className="truncate">by {run.createdBy.name}</span>}
              </p>
              {run.state === 'failed' && run.error && <p className="truncate text-xs text-danger-700" title={run.error}>{run.error}</p>}
            </div>
            <div className="text-right">
              {best ? (
                <>
                  <p className="num text-sm font-medium text-ink-950">{best.psnr === null ? EXACT.text : `${best.psnr.toFixed(2)} dB`}</p>
                  <p className="num text-xs text-ink-600">
                    b = {best.bits} · {formatBpp(best.bpp)} bpp
                  </p>
                </>
              ) : (
                <p className="text-xs text-ink-500">no result yet</p>
              )}
            </div>
          </li>
        );
      })}
    </ul>
  );
}
