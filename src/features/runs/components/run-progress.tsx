import { RUN_STATE_LABELS, type JobSummary, type RunDetail } from '../../../../server/contracts';
import { cx } from '../../../lib/cx';
import { formatMse, servedByText } from '../format';

type BarState = 'done' | 'active' | 'waiting' | 'stopped';

type SizeBar = { size: number; bits: number; state: BarState; value: number; note: string };

function trainJob(run: RunDetail): JobSummary | undefined {
  return run.jobs.find((job) => job.kind === 'train');
}

/**
 * One bar per codebook size of the sweep. The server reports the size being trained now; LBG visits sizes in
 * increasing order, and so do the other initialisations (one pass per size), so every smaller size is finished.
 */
export function sizeBars(run: RunDetail): SizeBar[] {
  const job = trainJob(run);
  const progress = job?.progress;
  // The bars follow the run's size ladder; a λ codebook can end with the same size as a ladder codebook, so only
  // codebooks without λ fill a bar.
  const codebooks = new Map(run.codebooks.filter((c) => c.lambda === null).map((c) => [c.size, c]));
  return run.normalized.sizes.map((size) => {
    const bits = Math.round(Math.log2(size));
    const book = codebooks.get(size);
    if (book || job?.state === 'succeeded') {
      return { size, bits, state: 'done', value: 1, note: book ? `${book.iterations} it. · MSE ${formatMse(book.distortion)}` : RUN_STATE_LABELS.succeeded };
    }
    const current = progress?.size;
    if (job?.state === 'running' && current !== undefined) {
      if (size < current) return { size, bits, state: 'done', value: 1, note: RUN_STATE_LABELS.succeeded };
      if (size === current) {
        const note = [progress?.iteration !== undefined && `iteration ${progress.iteration}`, progress?.distortion !== undefined && `MSE ${formatMse(progress.distortion)}`]
          .filter(Boolean)
          .join(' · ');
        // Lloyd stops on a relative-improvement test, so the iteration count is open-ended; half a bar says "under way".
        return { size, bits, state: 'active', value: 0.5, note };
      }
    }
    const stopped = job?.state === 'failed' || job?.state === 'cancelled' ? job.state : null;
    return { size, bits, state: stopped ? 'stopped' : 'waiting', value: 0, note: stopped ? RUN_STATE_LABELS[stopped] : RUN_STATE_LABELS.queued };
  });
}

const fills: Record<BarState, string> = {
  done: 'bg-ink-800',
  // Stripes tell "under way" apart from "half done" without relying on colour.
  active: 'bg-[repeating-linear-gradient(135deg,var(--color-ember-500)_0_6px,var(--color-ember-300)_6px_12px)]',
  waiting: 'bg-transparent',
  stopped: 'bg-transparent',
};

export function RunProgress({ run }: { run: RunDetail }) {
  const train = trainJob(run);
  const evaluate = run.jobs.find((job) => job.kind === 'evaluate');
  const bars = sizeBars(run);
  const phase = train?.state === 'running' ? train.progress?.message ?? train.progress?.phase : null;

  return (
    <div className="flex flex-col gap-4">
      <div className="grid gap-2 sm:grid-cols-2">
        <JobBar label="Training" job={train} />
        <JobBar label="Evaluation on held-out images" job={evaluate} />
      </div>
      {phase && <p className="text-sm text-ink-700">{phase}</p>}
      <ol className="grid gap-x-6 gap-y-2 lg:grid-cols-2" aria-label="Codebook sizes">
        {bars.map((bar) => (
          <li key={bar.size} className="grid grid-cols-[5.5rem_1fr_minmax(9rem,auto)] items-center gap-3 text-sm">
            <span className="num text-ink-800">
              K={bar.size} <span className="text-ink-500">b{bar.bits}</span>
            </span>
            <div
              role="progressbar"
              aria-label={`Codebook size ${bar.size}`}
              aria-valuemin={0}
              aria-valuemax={100}
              aria-valuenow={Math.round(bar.value * 100)}
              aria-valuetext={bar.note}
              className={cx('h-2 overflow-hidden rounded-sm border', bar.state === 'stopped' ? 'border-dashed border-ink-300' : 'border-ink-200 bg-ink-50')}
            >
              <div className={cx('h-full transition-[width] duration-300', fills[bar.state])} style={{ width: `${bar.value * 100}%` }} />
            </div>
            <span className={cx('num text-xs', bar.state === 'active' ? 'text-ember-800' : 'text-ink-600')}>{bar.note}</span>
          </li>
        ))}
      </ol>
    </div>
  );
}

function JobBar({ label, job }: { label: string; job: JobSummary | undefined }) {
  const fraction = job?.state === 'succeeded' ? 1 : (job?.progress?.fraction ?? 0);
  const served = job ? servedByText(job.servedBy) : null;
  const text = !job ? 'not started' : job.state === 'running' ? `${Math.round(fraction * 100)} %` : RUN_STATE_LABELS[job.state];
  return (
    <div className="rounded-md border border-ink-200 bg-ink-50/60 px-3 py-2">
      <div className="flex items-baseline justify-between text-sm">
        <span className="font-medium text-ink-800">{label}</span>
        <span className="num text-xs text-ink-600">{text}</span>
      </div>
      <div
        role="progressbar"
        aria-label={label}
        aria-valuemin={0}
        aria-valuemax={100}
        aria-valuenow={Math.round(fraction * 100)}
        className="mt-1.5 h-1.5 overflow-hidden rounded-full bg-ink-200"
      >
        <div className={cx('h-full transition-[width] duration-300', job?.state === 'failed' ? 'bg-danger-600' : 'bg-ink-800')} style={{ width: `${fraction * 100}%` }} />
      </div>
      {served && <p className="mt-1.5 truncate text-xs text-ink-600" title={served}>{served}</p>}
    </div>
  );
}
