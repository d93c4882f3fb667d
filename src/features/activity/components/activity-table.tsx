import { Link } from 'react-router-dom';
import type { ActivityEntry } from '../../../../server/contracts';
import { href } from '../../../config/routes';
import { formatDateTime } from '../../../lib/format';

/** Where an entry's object lives in the studio, for the kinds that have a page. */
function objectLink(teamId: number, type: string | null, id: string | null): string | null {
  if (!type || !id) return null;
  if (type === 'release') return href.teamRelease(teamId, id);
  if (type === 'run') return href.teamRun(teamId, id);
  if (type === 'codebook') return href.teamCodebook(teamId, id);
  if (type === 'image_set') return href.teamImageSet(teamId, id);
  return null;
}

function detailText(details: ActivityEntry['details']): string {
  if (!details) return '';
  return Object.entries(details)
    .map(([k, v]) => `${k}: ${typeof v === 'object' && v !== null ? JSON.stringify(v) : String(v)}`)
    .join(' · ');
}

/** One page of the activity log, newest first. */
export function ActivityTable({ teamId, entries }: { teamId: number; entries: ActivityEntry[] }) {
  return (
    <table className="w-full border-collapse text-left text-sm" data-testid="activity-table">
      <caption className="sr-only">Activity of this team, newest first</caption>
      <thead>
        <tr className="border-b border-ink-200 text-ink-600">
          <th className="py-2 pr-3 font-medium">When</th>
          <th className="py-2 pr-3 font-medium">Who</th>
          <th className="py-2 pr-3 font-medium">Action</th>
          <th className="py-2 pr-3 font-medium">Object</th>
          <th className="py-2 font-medium">Details</th>
        </tr>
      </thead>
      <tbody>
        {entries.map((e) => {
          const link = objectLink(teamId, e.targetType, e.targetId);
          const object = e.targetType ? `${e.targetType.replace('_', ' ')} #${e.targetId ?? '?'}` : '—';
          return (
            <tr key={e.id} className="border-b border-ink-100 align-top">
              <td className="py-2 pr-3 whitespace-nowrap">
                <time dateTime={e.createdAt}>{formatDateTime(e.createdAt)}</time>
              </td>
              <td className="py-2 pr-3">{e.actor?.name ?? '—'}</td>
              <td className="py-2 pr-3 font-mono text-xs">{e.action}</td>
              <td className="py-2 pr-3 whitespace-nowrap">
                {link ? (
                  <Link to={link} className="hover:underline">
                    {object}
                  </Link>
                ) : (
                  object
                )}
              </td>
              <td className="py-2 text-xs break-all text-ink-700">{detailText(e.details)}</td>
            </tr>
          );
        })}
      </tbody>
    </table>
  );
}
