import { teamKeys } from '../../../lib/queries/keys';

type TeamId = number;

/**
 * The runs feature's keys, all under the shared `teamKeys.runs(teamId)` prefix, so invalidating that prefix (a new,
 * renamed or deleted run) reaches every run read: this feature's and the other features' alike.
 */
export const runKeys = {
  team: teamKeys.runs,
  list: teamKeys.runList,
  run: teamKeys.run,
  detail: teamKeys.runDetail,
  curve: (teamId: TeamId, runId: number) => [...teamKeys.run(teamId, runId), 'curve'] as const,
  metrics: (teamId: TeamId, runId: number) => [...teamKeys.run(teamId, runId), 'metrics'] as const,
  trace: (teamId: TeamId, codebookId: number) => [...teamKeys.runs(teamId), 'trace', codebookId] as const,
};
