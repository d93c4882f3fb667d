import { RUN_STATE_LABELS, terminalJobStates, type EvaluationBatch } from '../../../../server/contracts';
import { messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { useCancelBatch } from '../api/cancel-batch';

/** The batch's job: its state in words, a progress bar while it runs, the reason it failed, and cancel. */
export function BatchStatus({ teamId, batch, canCancel }: { teamId: number; batch: EvaluationBatch; canCancel: boolean }) {
  const { job } = batch;
  const cancel = useCancelBatch(teamId, job.id);
  const open = !terminalJobStates.includes(job.state);
  const fraction = job.state === 'succeeded' ? 1 : (job.progress?.fraction ?? 0);
  return (
    <div className="flex flex-col gap-3">
      <div className="flex flex-wrap items-center gap-3">
        <p className="text-sm text-ink-800">
          State: <strong data-testid="batch-state">{RUN_STATE_LABELS[job.state]}</strong>
          {job.cancelRequested && open && ' (cancelling…)'}
        </p>
        {canCancel && open && (
          <Button variant="secondary" size="sm" pending={cancel.isPending} onClick={() => cancel.mutate()}>
            Cancel evaluation
          </Button>
        )}
      </div>
      <div role="progressbar" aria-label="Evaluation progress" aria-valuemin={0} aria-valuemax={100} aria-valuenow={Math.round(fraction * 100)} className="h-2 rounded-sm bg-ink-100">
        <div className="h-2 rounded-sm bg-ink-800" style={{ width: `${Math.round(fraction * 100)}%` }} />
      </div>
      {job.state === 'running' && job.progress?.message && <p className="text-sm text-ink-600">{job.progress.message}</p>}
      {job.state === 'failed' && (
        <Alert tone="error" title="The evaluation failed">
          {job.error ?? 'No reason was recorded.'}
        </Alert>
      )}
      {cancel.isError && <Alert tone="error">{messageOf(cancel.error)}</Alert>}
    </div>
  );
}
