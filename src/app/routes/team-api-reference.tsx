import type { QueryClient } from '@tanstack/react-query';
import type { LoaderFunctionArgs } from 'react-router-dom';
import { messageOf } from '../../lib/api-client';
import { PageHeader } from '../../components/ui/page-header';
import { ErrorState, LoadingState } from '../../components/ui/states';
import { apiDescriptionQueryOptions, useApiDescription } from '../../features/api-reference/api/get-api-description';
import { ApiReference } from '../../features/api-reference/components/api-reference';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  await requireTeam(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(apiDescriptionQueryOptions());
  return null;
};

export function Component() {
  const { team } = useCurrentTeam();
  const description = useApiDescription();
  if (!team) return null;

  return (
    <>
      <title>{`API · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={team.name}
        title="API"
        description={
          <>
            Every route of the studio’s HTTP API, who may call it and the shapes it takes and answers, from the server’s own description
            (<a className="text-ember-700 underline" href="/api/openapi.json">OpenAPI 3.1</a>). Scripts sign in with <code className="font-mono">POST /api/auth/login</code> and
            send the token as a Bearer header. The codebook format’s JSON Schema is at{' '}
            <a className="text-ember-700 underline" href="/api/schemas/codebook.schema.json">/api/schemas/codebook.schema.json</a>.
          </>
        }
      />
      {description.isPending && <LoadingState label="Loading the API description…" />}
      {description.isError && <ErrorState message={messageOf(description.error)} onRetry={() => void description.refetch()} />}
      {description.data && <ApiReference doc={description.data} />}
    </>
  );
}
