type TeamId = number;

export const memberKeys = {
  all: ['members'] as const,
  team: (teamId: TeamId) => [...memberKeys.all, teamId] as const,
  list: (teamId: TeamId) => [...memberKeys.team(teamId), 'list'] as const,
  invitations: (teamId: TeamId) => [...memberKeys.team(teamId), 'invitations'] as const,
};
