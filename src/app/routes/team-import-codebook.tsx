import { useQueryClient, type QueryClient } from '@tanstack/react-query';
import { useState } from 'react';
import { data, type LoaderFunctionArgs } from 'react-router-dom';
import type { CodebookDetail } from '../../../server/contracts';
import { CautionNote } from '../../components/ui/caution-note';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { codebookKeys } from '../../features/codebooks/api/keys';
import { EvaluateCodebookForm } from '../../features/codebook-import/components/evaluate-codebook-form';
import { ImportCodebookForm, ImportedNotice } from '../../features/codebook-import/components/import-codebook-form';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  if (team.role === 'viewer') throw data('Viewers read codebooks; engineers and admins import them', { status: 403 });
  return null;
};

export function Component() {
  const queryClient = useQueryClient();
  const { team } = useCurrentTeam();
  const [imported, setImported] = useState<CodebookDetail | null>(null);
  if (!team) return null;

  return (
    <>
      <title>{`Import codebook · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={team.name}
        title="Import codebook"
        description="Bring in a codebook document exported from Cellwright or written by your own tools, then measure it on this team's held-out images."
      />
      <div className="flex flex-col gap-6">
        <CautionNote />
        <Panel title="Codebook document" titleId="import-document">
          {imported ? (
            <div className="flex flex-col gap-4">
              <ImportedNotice teamId={team.id} codebook={imported} />
              <div>
                <button type="button" className="text-sm font-medium text-ember-700 hover:underline" onClick={() => setImported(null)}>
                  Import another
                </button>
              </div>
            </div>
          ) : (
            <ImportCodebookForm
              teamId={team.id}
              onImported={(codebook) => {
                // The codebooks feature's lists gain one; features cannot reach each other's keys, the page can.
                void queryClient.invalidateQueries({ queryKey: codebookKeys.list(team.id) });
                setImported(codebook);
              }}
            />
          )}
        </Panel>
        {imported && (
          <Panel title="Evaluate on a held-out set" titleId="import-evaluate" description="Rate, MSE, PSNR and SSIM on images the codebook never saw.">
            <EvaluateCodebookForm
              teamId={team.id}
              codebookId={imported.id}
              onQueued={() => void queryClient.invalidateQueries({ queryKey: codebookKeys.evaluations(team.id, imported.id) })}
            />
          </Panel>
        )}
      </div>
    </>
  );
}
