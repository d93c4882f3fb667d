import { Link } from 'react-router-dom';
import type { ReleaseSummary } from '../../../../server/contracts';
import { href } from '../../../config/routes';
import { formatDateTime } from '../../../lib/format';
import { ReleaseStateBadge } from './release-state';

/** The team's releases and proposals, newest first, as the API lists them. */
export function ReleasesTable({ teamId, releases, caption }: { teamId: number; releases: ReleaseSummary[]; caption: string }) {
  return (
    <table className="w-full border-collapse text-left text-sm">
      <caption className="sr-only">{caption}</caption>
      <thead>
        <tr className="border-b border-ink-200 text-ink-600">
          <th className="py-2 pr-3 font-medium">Release</th>
          <th className="py-2 pr-3 font-medium">State</th>
          <th className="py-2 pr-3 font-medium">Codebook</th>
          <th className="py-2 pr-3 font-medium">Proposed by</th>
          <th className="py-2 pr-3 font-medium">Reviewed by</th>
          <th className="py-2 font-medium">Released</th>
        </tr>
      </thead>
      <tbody>
        {releases.map((r) => (
          <tr key={r.id} className="border-b border-ink-100">
            <td className="py-2 pr-3">
              <Link to={href.teamRelease(teamId, r.id)} className="font-medium text-ink-950 hover:text-ember-700 hover:underline">
                {r.name} {r.version}
              </Link>
            </td>
            <td className="py-2 pr-3">
              <ReleaseStateBadge state={r.state} />
            </td>
            <td className="py-2 pr-3">
              <Link to={href.teamCodebook(teamId, r.codebookId)} className="hover:underline">
                {r.codebookName}
              </Link>
            </td>
            <td className="py-2 pr-3">{r.proposedBy?.name ?? '—'}</td>
            <td className="py-2 pr-3">{r.reviewedBy?.name ?? '—'}</td>
            <td className="py-2">{r.releasedAt ? formatDateTime(r.releasedAt) : '—'}</td>
          </tr>
        ))}
      </tbody>
    </table>
  );
}
