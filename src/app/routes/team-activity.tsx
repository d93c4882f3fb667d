import type { QueryClient } from '@tanstack/react-query';
import { useState } from 'react';
import { useSearchParams, type LoaderFunctionArgs } from 'react-router-dom';
import { auditActions, auditTargetTypes } from '../../../server/contracts';
import { messageOf } from '../../lib/api-client';
import { Button } from '../../components/ui/button';
import { SelectField, TextField } from '../../components/ui/field';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { activityQueryOptions, useActivity, type ActivityFilters } from '../../features/activity/api/list-activity';
import { ActivityTable } from '../../features/activity/components/activity-table';
import { useMembers } from '../../features/members/api/list-members';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

type FilterKey = 'actor' | 'action' | 'targetType' | 'targetId';

/** The filters in the page's query string; a value the API would refuse is dropped rather than sent. */
function filtersOf(search: URLSearchParams): ActivityFilters {
  const actor = Number(search.get('actor'));
  const action = search.get('action') ?? '';
  const targetType = search.get('targetType') ?? '';
  const targetId = search.get('targetId') ?? '';
  return {
    actor: Number.isInteger(actor) && actor > 0 ? actor : undefined,
    action: (auditActions as readonly string[]).includes(action) ? action : undefined,
    targetType: (auditTargetTypes as readonly string[]).includes(targetType) ? targetType : undefined,
    targetId: /^[1-9][0-9]{0,18}$/.test(targetId) ? targetId : undefined,
  };
}

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(activityQueryOptions(team.id, filtersOf(new URL(request.url).searchParams)));
  return null;
};

export function Component() {
  const { team, teamId } = useCurrentTeam();
  const [search, setSearch] = useSearchParams();
  const filters = filtersOf(search);
  // Older pages by cursor; the stack holds the cursors of the pages before, so "Newer" steps back.
  const [cursors, setCursors] = useState<number[]>([]);
  const before = cursors.at(-1);
  const page = useActivity(teamId, { ...filters, before });
  const members = useMembers(teamId);
  if (!team) return null;

  const setFilter = (key: FilterKey, value: string) => {
    const next = new URLSearchParams(search);
    if (value) next.set(key, value);
    else next.delete(key);
    setCursors([]);
    setSearch(next, { replace: true });
  };

  return (
    <>
      <title>{`Activity · ${team.name} · Cellwright`}</title>
      <PageHeader eyebrow={team.name} title="Activity" description="What the team's members did, newest first: runs, images, codebooks, reviews and releases, invitations and roles." />
      <Panel title="Filters" titleId="activity-filters" className="mb-6">
        <form className="grid gap-3 sm:grid-cols-4" aria-label="Activity filters" onSubmit={(e) => e.preventDefault()}>
          <SelectField label="Person" value={filters.actor ?? ''} onChange={(e) => setFilter('actor', e.target.value)}>
            <option value="">Everyone</option>
            {members.data?.members.map((m) => (
              <option key={m.userId} value={m.userId}>
                {m.name}
              </option>
            ))}
          </SelectField>
          <SelectField label="Action" value={filters.action ?? ''} onChange={(e) => setFilter('action', e.target.value)}>
            <option value="">Any action</option>
            {auditActions.map((a) => (
              <option key={a} value={a}>
                {a}
              </option>
            ))}
          </SelectField>
          <SelectField label="Object type" value={filters.targetType ?? ''} onChange={(e) => setFilter('targetType', e.target.value)}>
            <option value="">Any object</option>
            {auditTargetTypes.map((t) => (
              <option key={t} value={t}>
                {t.replace('_', ' ')}
              </option>
            ))}
          </SelectField>
          <TextField label="Object id" inputMode="numeric" value={filters.targetId ?? ''} onChange={(e) => setFilter('targetId', e.target.value.trim())} />
        </form>
      </Panel>
      <Panel title="Log" titleId="activity-log">
        {page.isPending && <LoadingState label="Loading activity…" />}
        {page.isError && <ErrorState message={messageOf(page.error)} onRetry={() => void page.refetch()} />}
        {page.data && page.data.entries.length === 0 && <EmptyState title="Nothing recorded matches these filters" />}
        {page.data && page.data.entries.length > 0 && <ActivityTable teamId={team.id} entries={page.data.entries} />}
        <div className="mt-4 flex gap-2">
          <Button variant="secondary" size="sm" disabled={cursors.length === 0} onClick={() => setCursors((c) => c.slice(0, -1))}>
            Newer
          </Button>
          <Button
            variant="secondary"
            size="sm"
            disabled={!page.data?.nextBefore}
            onClick={() => page.data?.nextBefore && setCursors((c) => [...c, page.data.nextBefore!])}
          >
            Older
          </Button>
        </div>
      </Panel>
    </>
  );
}
