import { teamKeys } from '../../../lib/queries/keys';

type TeamId = number;

export const codebookKeys = {
  team: teamKeys.codebooks,
  list: (teamId: TeamId) => [...codebookKeys.team(teamId), 'list'] as const,
  codebook: (teamId: TeamId, codebookId: number) => [...codebookKeys.team(teamId), 'codebook', codebookId] as const,
  detail: (teamId: TeamId, codebookId: number) => [...codebookKeys.codebook(teamId, codebookId), 'detail'] as const,
  evaluations: (teamId: TeamId, codebookId: number) => [...codebookKeys.codebook(teamId, codebookId), 'evaluations'] as const,
  reconstructionInfo: (teamId: TeamId, codebookId: number, imageId: number) =>
    [...codebookKeys.codebook(teamId, codebookId), 'reconstruction', imageId, 'info'] as const,
  anomalyMap: (teamId: TeamId, codebookId: number, imageId: number, rate: number) => [...codebookKeys.codebook(teamId, codebookId), 'anomaly', imageId, rate] as const,
  anomalyList: (teamId: TeamId, codebookId: number, rate: number, limit: number) => [...codebookKeys.codebook(teamId, codebookId), 'anomalies', rate, limit] as const,
  channel: (teamId: TeamId, codebookId: number, bers: string, seeds: number, resync: number) => [...codebookKeys.codebook(teamId, codebookId), 'channel', bers, seeds, resync] as const,
  denoise: (teamId: TeamId, codebookId: number, imageId: number, sigma: number, seed: number, step: number) =>
    [...codebookKeys.codebook(teamId, codebookId), 'denoise', imageId, sigma, seed, step] as const,
};
