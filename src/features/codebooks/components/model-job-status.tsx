import { RUN_STATE_LABELS } from '../../../../server/contracts';
import { Button } from '../../../components/ui/button';
import { ErrorState } from '../../../components/ui/states';
import { messageOf } from '../../../lib/api-client';
import type { ModelJob } from '../hooks/use-model-job';

/**
 * Where a model job is while it has no result: nothing stored yet, with a Compute button for any member (opening the
 * page starts nothing); queued or running with its progress and, for engineers and admins, a Cancel button (a job is
 * shared by every member who asks the same, so stopping it is theirs, as for evaluations); failed with its reason, or
 * cancelled, with a Start again button.
 */
export function ModelJobStatus({ job, label, canCancel }: { job: ModelJob; label: string; canCancel: boolean }) {
  const { view, error } = job;
  if (error) return <ErrorState message={messageOf(error)} onRetry={job.compute} />;
  if (job.looking) return <p className="text-sm text-ink-600" role="status">{label}: looking for a stored result…</p>;
  if (job.idle) {
    return (
      <div className="flex items-center gap-3 text-sm text-ink-700" role="status">
        <span>{label}: not computed yet</span>
        <Button variant="secondary" onClick={job.compute}>
          Compute
        </Button>
      </div>
    );
  }
  const state = view?.job.state;
  if (state === 'succeeded') return null;
  if (state === 'cancelled') {
    return (
      <div className="flex items-center gap-3 text-sm text-ink-700" role="status">
        <span>{label}: {RUN_STATE_LABELS.cancelled}</span>
        <Button variant="secondary" onClick={job.compute}>
          Start again
        </Button>
      </div>
    );
  }
  const progress = view?.job.progress;
  const fraction = progress?.fraction ?? 0;
  return (
    <div className="flex flex-wrap items-center gap-3 text-sm text-ink-700" role="status" aria-live="polite" data-testid="model-job-status">
      <span>
        {label}: {state ? RUN_STATE_LABELS[state] : 'Starting'}
        {progress?.phase ? ` · ${progress.phase}` : ''}
      </span>
      <progress className="h-2 w-40" max={1} value={fraction} aria-label={`${label} progress`} />
      <span className="num">{Math.round(fraction * 100)} %</span>
      {view && canCancel && (
        <Button variant="secondary" onClick={job.cancel}>
          Cancel
        </Button>
      )}
    </div>
  );
}
