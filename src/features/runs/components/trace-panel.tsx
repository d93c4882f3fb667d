import { useState } from 'react';
import { trainsEverySize, type RunDetail } from '../../../../server/contracts';
import { TraceChart, type TraceStep } from '../../../components/charts/trace-chart';
import { SelectField } from '../../../components/ui/field';
import { ErrorState, LoadingState } from '../../../components/ui/states';
import { messageOf } from '../../../lib/api-client';
import { useCodebookTrace } from '../api/get-codebook-trace';

/**
 * Convergence: while training, the iterations the event stream reports; afterwards the trace recorded with a
 * codebook (with LBG splitting, the largest one carries the path through every smaller size).
 */
export function TracePanel({ teamId, run, liveSteps }: { teamId: number; run: RunDetail; liveSteps: TraceStep[] }) {
  const largest = run.codebooks.length > 0 ? [...run.codebooks].sort((a, b) => b.size - a.size)[0].id : null;
  const [chosen, setChosen] = useState<number | null>(null);
  const codebookId = chosen ?? largest;
  const trace = useCodebookTrace(teamId, codebookId);

  if (codebookId === null) {
    if (liveSteps.length === 0) return <p className="py-6 text-sm text-ink-600">The trace appears with the first Lloyd iteration.</p>;
    return <TraceChart title="Distortion per Lloyd iteration, reported live" steps={liveSteps} />;
  }

  return (
    <div className="flex flex-col gap-3">
      {!trainsEverySize(run.normalized.init) && run.codebooks.length > 1 && (
        <SelectField
          label="Codebook"
          containerClassName="max-w-56"
          value={codebookId}
          onChange={(event) => setChosen(Number(event.target.value))}
        >
          {[...run.codebooks]
            .sort((a, b) => a.size - b.size)
            .map((c) => (
              <option key={c.id} value={c.id}>
                K = {c.size} (b = {c.bits})
              </option>
            ))}
        </SelectField>
      )}
      {trace.isPending && <LoadingState label="Loading the trace…" className="py-6" />}
      {trace.isError && <ErrorState message={messageOf(trace.error)} onRetry={() => void trace.refetch()} />}
      {trace.data && trace.data.length === 0 && <p className="py-6 text-sm text-ink-600">This codebook carries no iteration record.</p>}
      {trace.data && trace.data.length > 0 && <TraceChart title="Distortion per Lloyd iteration, log scale" steps={trace.data} />}
    </div>
  );
}
