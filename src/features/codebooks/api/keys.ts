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
  structure: (teamId: TeamId, codebookId: number) => [...codebookKeys.codebook(teamId, codebookId), 'structure'] as const,
  structureSteps: (teamId: TeamId, codebookId: number, imageId: number) =>
    [...codebookKeys.codebook(teamId, codebookId), 'reconstruction', imageId, 'steps'] as const,
  modelJob: (teamId: TeamId, jobId: number) => [...codebookKeys.team(teamId), 'model-job', jobId] as const,
  /** The earlier job of one model request (its key as useModelJob names it), if any. */
  modelJobFound: (teamId: TeamId, request: string) => [...codebookKeys.team(teamId), 'model-job-found', request] as const,
  rounding: (teamId: TeamId, codebookId: number) => [...codebookKeys.codebook(teamId, codebookId), 'firmware-rounding'] as const,
  channel: (teamId: TeamId, codebookId: number, bers: string, seeds: number, resync: number) => [...codebookKeys.codebook(teamId, codebookId), 'channel', bers, seeds, resync] as const,
};
