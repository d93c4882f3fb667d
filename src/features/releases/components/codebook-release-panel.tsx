import { Link, useNavigate } from 'react-router-dom';
import { href } from '../../../config/routes';
import { Panel } from '../../../components/ui/panel';
import { LoadingState } from '../../../components/ui/states';
import { useCodebookProposal } from '../api/get-codebook-proposal';
import { ProposeForm } from './propose-form';
import { ReleaseStateBadge } from './release-state';

/** The codebook page's release panel: its review's state with a link, or the form to propose it (engineers and admins). */
export function CodebookReleasePanel({ teamId, codebookId, canPropose }: { teamId: number; codebookId: number; canPropose: boolean }) {
  const proposal = useCodebookProposal(teamId, codebookId);
  const navigate = useNavigate();
  const r = proposal.data;
  return (
    <Panel
      title="Release"
      titleId="codebook-release"
      description={r ? undefined : 'Propose this codebook for release: another engineer or an admin reviews it, and once approved it is frozen.'}
    >
      {proposal.isPending && <LoadingState label="Loading its review…" />}
      {r && (
        <p className="flex flex-wrap items-center gap-2 text-sm">
          <Link to={href.teamRelease(teamId, r.id)} className="font-medium text-ink-950 hover:underline">
            {r.name} {r.version}
          </Link>
          <ReleaseStateBadge state={r.state} />
        </p>
      )}
      {proposal.isSuccess && !r && canPropose && <ProposeForm teamId={teamId} codebookId={codebookId} onProposed={(created) => navigate(href.teamRelease(teamId, created.id))} />}
      {proposal.isSuccess && !r && !canPropose && <p className="text-sm text-ink-600">Not proposed for release.</p>}
    </Panel>
  );
}
