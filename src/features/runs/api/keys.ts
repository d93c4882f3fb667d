type TeamId = number;

/** Every variable of a fetch is in its key; `team(teamId)` invalidates everything run-related of a team. */
export const runKeys = {
  all: ['runs'] as const,
  team: (teamId: TeamId) => [...runKeys.all, teamId] as const,
  list: (teamId: TeamId) => [...runKeys.team(teamId), 'list'] as const,
  run: (teamId: TeamId, runId: number) => [...runKeys.team(teamId), 'run', runId] as const,
  detail: (teamId: TeamId, runId: number) => [...runKeys.run(teamId, runId), 'detail'] as const,
  curve: (teamId: TeamId, runId: number) => [...runKeys.run(teamId, runId), 'curve'] as const,
  metrics: (teamId: TeamId, runId: number) => [...runKeys.run(teamId, runId), 'metrics'] as const,
  trace: (teamId: TeamId, codebookId: number) => [...runKeys.team(teamId), 'trace', codebookId] as const,
};
