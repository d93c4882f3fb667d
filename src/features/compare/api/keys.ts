import type { CompareRate } from '../../../../server/contracts';

type TeamId = number;

export const compareKeys = {
  all: ['compare'] as const,
  team: (teamId: TeamId) => [...compareKeys.all, teamId] as const,
  /** Run ids in the order chosen: the first is the reference of every pair, so order is part of the result. */
  result: (teamId: TeamId, runIds: readonly number[], rate: CompareRate) => [...compareKeys.team(teamId), 'result', runIds.join(','), rate] as const,
  candidates: (teamId: TeamId) => [...compareKeys.team(teamId), 'candidates'] as const,
};
