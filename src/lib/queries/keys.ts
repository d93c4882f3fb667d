type TeamId = number;

/**
 * The one key factory of the client's cache. Every key of a team's data starts with ['teams', teamId, <resource>],
 * so a change invalidates by prefix: `runs(teamId)` reaches every run read of every feature (the runs page, the
 * team home's recent runs, the compare page's picker, a run's curve and metrics), `imageSets(teamId)` every set and
 * image read. Every variable of a fetch is in its key, so a set's images never share an entry with another set's.
 */
export const teamKeys = {
  all: ['teams'] as const,
  team: (teamId: TeamId) => [...teamKeys.all, teamId] as const,

  runs: (teamId: TeamId) => [...teamKeys.team(teamId), 'runs'] as const,
  runList: (teamId: TeamId) => [...teamKeys.runs(teamId), 'list'] as const,
  run: (teamId: TeamId, runId: number) => [...teamKeys.runs(teamId), runId] as const,
  runDetail: (teamId: TeamId, runId: number) => [...teamKeys.run(teamId, runId), 'detail'] as const,

  imageSets: (teamId: TeamId) => [...teamKeys.team(teamId), 'image-sets'] as const,
  imageSetList: (teamId: TeamId) => [...teamKeys.imageSets(teamId), 'list'] as const,
  imageSet: (teamId: TeamId, setId: number) => [...teamKeys.imageSets(teamId), setId] as const,
  /** `role` narrows the list on the server (the held-out images an imported codebook is measured on). */
  setImages: (teamId: TeamId, setId: number, role: SetImagesRole = 'all') => [...teamKeys.imageSet(teamId, setId), 'images', role] as const,

  codebooks: (teamId: TeamId) => [...teamKeys.team(teamId), 'codebooks'] as const,
  compare: (teamId: TeamId) => [...teamKeys.team(teamId), 'compare'] as const,
  members: (teamId: TeamId) => [...teamKeys.team(teamId), 'members'] as const,
  workers: (teamId: TeamId) => [...teamKeys.team(teamId), 'workers'] as const,
};

export type SetImagesRole = 'all' | 'training' | 'held-out';
