import type { WorkerSummary, WorkersResponse } from '../../../../server/contracts';
import { formatAgo, formatDateTime } from '../../../lib/format';
import { Stat } from '../../../components/ui/stat';

type TaskKind = NonNullable<WorkerSummary['task']>['kind'];

const taskLabels: Record<TaskKind, string> = {
  train: 'Training',
  measure: 'Measuring held-out images',
  baselines: 'JPEG baselines',
  model: 'Anomaly map or denoising',
};

/** A worker's current task: its kind and job; a job of another team is not named (the API gives no id for it). */
export function taskText(task: WorkerSummary['task']): string {
  if (!task) return 'Idle';
  return `${taskLabels[task.kind]} · ${task.jobId === null ? "another team's job" : `job #${task.jobId}`}`;
}

/** The compute workers the studio knows, one row each, with the time of each one's last heartbeat. */
export function WorkersTable({ workers, now }: { workers: WorkerSummary[]; now: number }) {
  return (
    <table className="w-full border-collapse text-left text-sm">
      <caption className="sr-only">Compute workers</caption>
      <thead>
        <tr className="border-b border-ink-200 text-xs tracking-[0.06em] text-ink-600 uppercase">
          <th scope="col" className="py-2 pr-3 font-medium">Host</th>
          <th scope="col" className="py-2 pr-3 text-right font-medium">Threads</th>
          <th scope="col" className="py-2 pr-3 font-medium">Current task</th>
          <th scope="col" className="py-2 pr-3 font-medium">Last heartbeat</th>
          <th scope="col" className="py-2 font-medium">Started</th>
        </tr>
      </thead>
      <tbody>
        {workers.map((worker) => (
          <tr key={worker.workerId} className="border-b border-ink-100 last:border-b-0">
            <td className="py-2 pr-3 font-medium text-ink-950" title={worker.workerId}>
              {worker.host}
            </td>
            <td className="num py-2 pr-3 text-right">{worker.threads}</td>
            <td className="py-2 pr-3 text-ink-800">
              {taskText(worker.task)}
              {worker.task && <span className="ml-2 text-xs text-ink-600">since {formatAgo(worker.task.since, now)}</span>}
            </td>
            <td className="num py-2 pr-3 text-ink-800" title={formatDateTime(worker.lastBeat)}>
              {formatAgo(worker.lastBeat, now)}
            </td>
            <td className="num py-2 text-ink-600">{formatDateTime(worker.startedAt)}</td>
          </tr>
        ))}
      </tbody>
    </table>
  );
}

/** Jobs and compute tasks waiting and under way, across the studio. */
export function QueueDepth({ queue }: { queue: WorkersResponse['queue'] }) {
  const rows: Array<[string, number]> = [
    ['Jobs waiting', queue.jobsWaiting],
    ['Jobs running', queue.jobsRunning],
    ['Tasks waiting', queue.tasksWaiting],
    ['Tasks running', queue.tasksRunning],
  ];
  return (
    <dl className="grid grid-cols-2 gap-3 md:grid-cols-4" aria-label="Queue depth">
      {rows.map(([label, value]) => (
        <Stat key={label} label={label} value={<span className="num">{value}</span>} />
      ))}
    </dl>
  );
}
