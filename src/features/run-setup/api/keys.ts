type TeamId = number;

/**
 * The run form's own view of the team's data. Features never share caches across their boundary, so these keys are
 * separate from the image-sets feature's; the queries here refetch on mount (staleTime 0) so the form always
 * counts the images as they are now.
 */
export const runSetupKeys = {
  all: ['run-setup'] as const,
  team: (teamId: TeamId) => [...runSetupKeys.all, teamId] as const,
  imageSets: (teamId: TeamId) => [...runSetupKeys.team(teamId), 'image-sets'] as const,
  setImages: (teamId: TeamId, setId: number) => [...runSetupKeys.team(teamId), 'image-sets', setId, 'images'] as const,
  run: (teamId: TeamId, runId: number) => [...runSetupKeys.team(teamId), 'run', runId] as const,
  recentRuns: (teamId: TeamId) => [...runSetupKeys.team(teamId), 'recent-runs'] as const,
};
