import { Link } from 'react-router-dom';
import type { ImageSet } from '../../../../server/contracts';
import { href } from '../../../config/routes';
import { formatDate } from '../../../lib/format';

/** The team's sets with their counts; the held-out share is drawn so lopsided splits stand out. */
export function ImageSetsTable({ teamId, sets }: { teamId: number; sets: ImageSet[] }) {
  return (
    <table className="w-full border-collapse text-left text-base">
      <caption className="sr-only">Image sets of this team</caption>
      <thead>
        <tr className="border-b border-ink-200 text-xs tracking-[0.06em] text-ink-600 uppercase">
          <th scope="col" className="py-2 pr-4 font-medium">
            Set
          </th>
          <th scope="col" className="py-2 pr-4 text-right font-medium">
            Images
          </th>
          <th scope="col" className="py-2 pr-4 text-right font-medium">
            Training
          </th>
          <th scope="col" className="py-2 pr-4 text-right font-medium">
            Held-out
          </th>
          <th scope="col" className="w-40 py-2 pr-4 font-medium">
            <span className="sr-only">Share held out</span>
          </th>
          <th scope="col" className="py-2 font-medium">
            Updated
          </th>
        </tr>
      </thead>
      <tbody>
        {sets.map((set) => (
          <tr key={set.id} className="border-b border-ink-100 last:border-b-0">
            <td className="py-3 pr-4">
              <Link to={href.teamImageSet(teamId, set.id)} className="font-medium text-ink-950 hover:text-ember-700 hover:underline">
                {set.name}
              </Link>
              {set.description && <p className="line-clamp-1 max-w-md text-sm text-ink-600">{set.description}</p>}
            </td>
            <td className="num py-3 pr-4 text-right">{set.counts.total}</td>
            <td className="num py-3 pr-4 text-right">{set.counts.training}</td>
            <td className="num py-3 pr-4 text-right">{set.counts.heldOut}</td>
            <td className="py-3 pr-4">
              <RoleShare training={set.counts.training} heldOut={set.counts.heldOut} />
            </td>
            <td className="num py-3 text-sm text-ink-700">{formatDate(set.updatedAt)}</td>
          </tr>
        ))}
      </tbody>
    </table>
  );
}

export function RoleShare({ training, heldOut }: { training: number; heldOut: number }) {
  const total = training + heldOut;
  const share = total === 0 ? 0 : heldOut / total;
  return (
    <div className="flex items-center gap-2" title={`${Math.round(share * 100)} % held out`}>
      <div className="h-1.5 flex-1 overflow-hidden rounded-full bg-ink-200">
        <div className="h-full bg-ink-800" style={{ width: `${share * 100}%` }} />
      </div>
      <span className="num w-9 text-right text-xs text-ink-600">{Math.round(share * 100)} %</span>
    </div>
  );
}
