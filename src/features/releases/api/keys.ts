import { teamKeys } from '../../../lib/queries/keys';

/** Releases and reviews of a team: every key under ['teams', teamId, 'releases'], so one prefix refreshes them all. */
export const releaseKeys = {
  all: (teamId: number) => [...teamKeys.team(teamId), 'releases'] as const,
  list: (teamId: number) => [...releaseKeys.all(teamId), 'list'] as const,
  detail: (teamId: number, releaseId: number) => [...releaseKeys.all(teamId), releaseId, 'detail'] as const,
  report: (teamId: number, releaseId: number) => [...releaseKeys.all(teamId), releaseId, 'report'] as const,
  ofCodebook: (teamId: number, codebookId: number) => [...releaseKeys.all(teamId), 'codebook', codebookId] as const,
};
