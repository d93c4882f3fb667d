import { Link } from 'react-router-dom';
import type { ImageSet } from '../../../../server/contracts';
import { href } from '../../../config/routes';
import { RoleShare } from './image-sets-table';

/** The team's sets in brief for the team home: name, counts and the held-out share. */
export function ImageSetsOverview({ teamId, sets, limit = 5 }: { teamId: number; sets: ImageSet[]; limit?: number }) {
  const newest = [...sets].sort((a, b) => b.updatedAt.localeCompare(a.updatedAt)).slice(0, limit);
  return (
    <ul aria-label="Image sets" className="flex flex-col divide-y divide-ink-100">
      {newest.map((set) => (
        <li key={set.id} className="grid grid-cols-[minmax(0,1fr)_7rem] items-center gap-x-4 py-2.5">
          <div className="min-w-0">
            <Link to={href.teamImageSet(teamId, set.id)} className="block truncate font-medium text-ink-950 hover:text-ember-700 hover:underline">
              {set.name}
            </Link>
            <p className="num text-xs text-ink-600">
              {set.counts.total} images · {set.counts.training} training · {set.counts.heldOut} held-out
            </p>
          </div>
          <RoleShare training={set.counts.training} heldOut={set.counts.heldOut} />
        </li>
      ))}
    </ul>
  );
}
