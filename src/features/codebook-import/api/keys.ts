type TeamId = number;

export const codebookImportKeys = {
  all: ['codebook-import'] as const,
  team: (teamId: TeamId) => [...codebookImportKeys.all, teamId] as const,
  imageSets: (teamId: TeamId) => [...codebookImportKeys.team(teamId), 'image-sets'] as const,
  setImages: (teamId: TeamId, setId: number) => [...codebookImportKeys.team(teamId), 'image-sets', setId, 'images'] as const,
};
