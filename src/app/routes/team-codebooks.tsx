import type { QueryClient } from '@tanstack/react-query';
import { Link, type LoaderFunctionArgs } from 'react-router-dom';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { plural } from '../../lib/format';
import { buttonClass } from '../../components/ui/button';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { codebooksQueryOptions, useCodebooks } from '../../features/codebooks/api/list-codebooks';
import { CodebooksTable } from '../../features/codebooks/components/codebooks-table';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(codebooksQueryOptions(team.id));
  return null;
};

export function Component() {
  const { team, teamId } = useCurrentTeam();
  const codebooks = useCodebooks(teamId);
  if (!team) return null;
  const canImport = team.role !== 'viewer';

  return (
    <>
      <title>{`Codebooks · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={team.name}
        title="Codebooks"
        description="Every codebook trained by a run or imported from a file. Open one to see its codewords, cells and reconstructions."
        actions={
          canImport && (
            <Link to={href.teamImportCodebook(team.id)} className={buttonClass('secondary')}>
              Import codebook
            </Link>
          )
        }
      />
      <Panel title="All codebooks" titleId="codebooks-list" description={codebooks.data ? plural(codebooks.data.length, 'codebook') : undefined} bodyClassName="px-5 py-2">
        {codebooks.isPending && <LoadingState label="Loading codebooks…" />}
        {codebooks.isError && <ErrorState message={messageOf(codebooks.error)} onRetry={() => void codebooks.refetch()} className="my-3" />}
        {codebooks.data?.length === 0 && (
          <EmptyState title="No codebooks yet" className="my-3">
            Codebooks appear here when a run finishes training, or when one is imported.
          </EmptyState>
        )}
        {codebooks.data && codebooks.data.length > 0 && <CodebooksTable teamId={team.id} codebooks={codebooks.data} />}
      </Panel>
    </>
  );
}
