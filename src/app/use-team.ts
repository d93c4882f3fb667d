import { useParams } from 'react-router-dom';
import type { MeResponse, TeamWithRole } from '../../server/contracts';
import { useMe } from '../features/auth/api/get-me';

/**
 * The current team for pages under /teams/:teamId. The layout's loader has already checked
 * membership, so the cached session normally answers at once.
 */
export function useCurrentTeam(): { me: MeResponse | undefined; team: TeamWithRole | undefined; teamId: number } {
  const { teamId: param } = useParams();
  const teamId = Number(param);
  const { data: me } = useMe();
  return { me, team: me?.teams.find((team) => team.id === teamId), teamId };
}
