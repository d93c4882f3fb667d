import { teamKeys } from '../../../lib/queries/keys';

type TeamId = number;

export const batchKeys = {
  team: (teamId: TeamId) => [...teamKeys.team(teamId), 'evaluation-batches'] as const,
  list: (teamId: TeamId) => [...batchKeys.team(teamId), 'list'] as const,
  batch: (teamId: TeamId, jobId: number) => [...batchKeys.team(teamId), jobId] as const,
};
