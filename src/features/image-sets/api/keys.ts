import { teamKeys } from '../../../lib/queries/keys';

type TeamId = number;

/** Under the shared `teamKeys.imageSets(teamId)` prefix, so a change here also refreshes the run form's and import's reads. */
export const imageSetKeys = {
  team: teamKeys.imageSets,
  list: teamKeys.imageSetList,
  set: teamKeys.imageSet,
  detail: (teamId: TeamId, setId: number) => [...teamKeys.imageSet(teamId, setId), 'detail'] as const,
  images: (teamId: TeamId, setId: number) => teamKeys.setImages(teamId, setId),
};
