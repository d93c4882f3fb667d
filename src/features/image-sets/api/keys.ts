type TeamId = number;

/** Every variable of a fetch is in its key, so a set's images never share a cache entry with another set's. */
export const imageSetKeys = {
  all: ['image-sets'] as const,
  team: (teamId: TeamId) => [...imageSetKeys.all, teamId] as const,
  list: (teamId: TeamId) => [...imageSetKeys.team(teamId), 'list'] as const,
  detail: (teamId: TeamId, setId: number) => [...imageSetKeys.team(teamId), 'set', setId] as const,
  images: (teamId: TeamId, setId: number) => [...imageSetKeys.detail(teamId, setId), 'images'] as const,
};
