import type { BdMethod, CompareRate } from '../../../../server/contracts';
import { teamKeys } from '../../../lib/queries/keys';

type TeamId = number;

/** Under the shared team prefix; the picker's runs are the shared run list (`teamKeys.runList`), not a key of its own. */
export const compareKeys = {
  team: teamKeys.compare,
  /** Run ids in the order chosen: the first is the reference of every pair, so order is part of the result. */
  result: (teamId: TeamId, runIds: readonly number[], rate: CompareRate, method: BdMethod) =>
    [...compareKeys.team(teamId), 'result', runIds.join(','), rate, method] as const,
};
