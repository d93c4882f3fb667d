import type { ReleaseStateName } from '../../../../server/contracts';
import { Badge } from '../../../components/ui/badge';

export const RELEASE_STATE_LABELS: Record<ReleaseStateName, string> = {
  proposed: 'Awaiting review',
  returned: 'Returned',
  approved: 'Released',
};

export function ReleaseStateBadge({ state }: { state: ReleaseStateName }) {
  return <Badge tone={state === 'approved' ? 'ink' : state === 'returned' ? 'caution' : 'accent'}>{RELEASE_STATE_LABELS[state]}</Badge>;
}
