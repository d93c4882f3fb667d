import { useQueryClient } from '@tanstack/react-query';
import type { QueryClient } from '@tanstack/react-query';
import { useMemo, useState } from 'react';
import { data, Link, useParams, type LoaderFunctionArgs } from 'react-router-dom';
import { MODEL_CAUTION, STRUCTURE_LABELS, type CodebookDetail } from '../../../server/contracts';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { formatDateTime } from '../../lib/format';
import { HistogramChart } from '../../components/charts/histogram-chart';
import { buttonClass } from '../../components/ui/button';
import { CautionNote } from '../../components/ui/caution-note';
import { SelectField } from '../../components/ui/field';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { Stat } from '../../components/ui/stat';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { codebookExportUrl, codebookQueryOptions, useCodebook } from '../../features/codebooks/api/get-codebook';
import { useCodebookEvaluations } from '../../features/codebooks/api/get-codebook-evaluations';
import { indexMapUrl, useReconstructionInfo } from '../../features/codebooks/api/get-reconstruction';
import { atlasOrder, CodewordAtlas, type AtlasOrder } from '../../features/codebooks/components/codeword-atlas';
import { ReconstructionViewer } from '../../features/codebooks/components/reconstruction-viewer';
import { StructureAtlas } from '../../features/codebooks/components/structure-atlas';
import { StructureStepsViewer } from '../../features/codebooks/components/structure-steps-viewer';
import { AnomalyView } from '../../features/codebooks/components/anomaly-view';
import { DenoiseView } from '../../features/codebooks/components/denoise-view';
import { ChannelCurveView, ReorderAction } from '../../features/codebooks/components/channel-view';
import { firmwareZipUrl } from '../../features/codebooks/api/get-channel';
import { FirmwareRounding } from '../../features/codebooks/components/firmware-rounding';
import { DecoderCostPanel } from '../../features/codebooks/components/decoder-cost';
import { cellMse, cellsNote, codewordMean, usagePercent, usageSummary } from '../../features/codebooks/cell-stats';
import { fixedRate, formatBpp, formatBytes, formatDb, formatMse } from '../../features/codebooks/format';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';
import { EvaluateCodebookForm } from '../../features/codebook-import/components/evaluate-codebook-form';
import { codebookKeys } from '../../features/codebooks/api/keys';
import { CodebookReleasePanel } from '../../features/releases/components/codebook-release-panel';

export { RouteError as ErrorBoundary } from './route-error';

function parseCodebookId(value: string | undefined): number {
  const id = Number(value);
  if (!Number.isInteger(id) || id <= 0) throw data('No such codebook', { status: 404 });
  return id;
}

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(codebookQueryOptions(team.id, parseCodebookId(params.codebookId)));
  return null;
};

export function Component() {
  const { team, teamId } = useCurrentTeam();
  const codebookId = Number(useParams().codebookId);
  const codebook = useCodebook(teamId, codebookId);
  if (!team) return null;
  if (codebook.isPending) return <LoadingState label="Loading the codebook…" />;
  if (codebook.isError) return <ErrorState message={messageOf(codebook.error)} onRetry={() => void codebook.refetch()} />;
  return <CodebookPage teamId={team.id} teamName={team.name} canEvaluate={team.role !== 'viewer'} codebook={codebook.data} />;
}

function CodebookPage({ teamId, teamName, canEvaluate, codebook }: { teamId: number; teamName: string; canEvaluate: boolean; codebook: CodebookDetail }) {
  const queryClient = useQueryClient();
  const [order, setOrder] = useState<AtlasOrder>('usage');
  const [gain, setGain] = useState(1);
  const [selected, setSelected] = useState<number | null>(null);
  const meanRemoved = codebook.meanBits > 0;
  const sequence = useMemo(() => atlasOrder(codebook.codewords, codebook.usage, order), [codebook, order]);
  const mse = useMemo(() => cellMse(codebook), [codebook]);
  const { total: totalUsage, cells, unused } = usageSummary(codebook.usage, codebook.partitionRows);
  const highlight = selected === null ? null : sequence.indexOf(selected);
  const geometry = { width: codebook.patch.width, height: codebook.patch.height, channels: codebook.channels };

  return (
    <>
      <title>{`${codebook.name} · Codebooks · ${teamName} · Cellwright`}</title>
      <PageHeader
        eyebrow={
          codebook.runId !== null ? (
            <Link to={href.teamRun(teamId, codebook.runId)} className="hover:text-ink-900 hover:underline">
              Codebook · from {codebook.origin}
            </Link>
          ) : (
            'Codebook · imported'
          )
        }
        title={codebook.name}
        description={`${STRUCTURE_LABELS[codebook.structure]}${codebook.lambda !== null ? ` (λ = ${codebook.lambda})` : ''}${codebook.stages ? ` (stages of ${codebook.stages.join(' + ')} bits)` : ''}: ${codebook.size.toLocaleString('en-GB')} codewords of ${codebook.dimension} components: ${codebook.patch.width}×${codebook.patch.height} ${codebook.color} blocks${meanRemoved ? `, block mean coded in ${codebook.meanBits} bits and removed` : ''}.`}
      />
      <div className="flex flex-col gap-6">
        <dl className="grid grid-cols-2 gap-3 md:grid-cols-4">
          <Stat label="Index bits" value={<span className="num">{codebook.indexBits}</span>} note={`table K = ${codebook.size.toLocaleString('en-GB')}`} />
          <Stat label="Fixed rate" value={<span className="num">{formatBpp(fixedRate(codebook.indexBits, codebook.meanBits, codebook.patch))}</span>} note="(b + mean bits) / pixels per block" />
          <Stat label="Training MSE" value={<span className="num">{formatMse(codebook.distortion)}</span>} note="per component, 0..255 scale" />
          <Stat label="Unused cells" value={<span className="num">{unused}</span>} note={`of ${cells}${cellsNote(codebook)} on ${totalUsage.toLocaleString('en-GB')} vectors`} />
        </dl>

        <CodebookReleasePanel teamId={teamId} codebookId={codebook.id} canPropose={canEvaluate} />

        <DecoderCostPanel cost={codebook.decoderCost} />

        <Panel
          title="Codewords"
          titleId="codebook-atlas"
          description={meanRemoved ? 'Mean-removed residuals, drawn around mid-grey' : 'Each tile is one codeword, drawn as the block it reconstructs'}
          actions={
            <div className="flex items-end gap-3">
              <SelectField label="Order" value={order} onChange={(event) => setOrder(event.target.value as AtlasOrder)} containerClassName="w-40">
                <option value="usage">By usage</option>
                <option value="brightness">By brightness</option>
                <option value="index">By index</option>
              </SelectField>
              {meanRemoved && (
                <SelectField label="Contrast" value={gain} onChange={(event) => setGain(Number(event.target.value))} containerClassName="w-28">
                  <option value={1}>×1</option>
                  <option value={2}>×2</option>
                  <option value={4}>×4</option>
                </SelectField>
              )}
            </div>
          }
        >
          <div className="flex flex-col gap-4 lg:flex-row">
            <div className="min-w-0 flex-1 overflow-x-auto">
              <CodewordAtlas
                codewords={codebook.codewords}
                geometry={geometry}
                usage={codebook.usage}
                order={order}
                meanRemoved={meanRemoved}
                gain={gain}
                selected={selected}
                onSelect={setSelected}
              />
            </div>
            <div className="w-full shrink-0 rounded-md border border-ink-200 bg-ink-50/60 px-4 py-3 text-sm lg:w-56" aria-live="polite">
              {selected === null ? (
                <p className="text-ink-600">Click a tile (or focus the atlas and use the arrow keys) to read its cell.</p>
              ) : (
                <dl className="grid grid-cols-[auto_1fr] gap-x-3 gap-y-1">
                  <dt className="text-ink-600">Codeword</dt>
                  <dd className="num text-ink-900">#{selected}</dd>
                  <dt className="text-ink-600">Usage</dt>
                  <dd className="num text-ink-900">
                    {codebook.usage[selected].toLocaleString('en-GB')} ({usagePercent(codebook.usage, selected, totalUsage).toFixed(2)} %)
                  </dd>
                  {mse && (
                    <>
                      <dt className="text-ink-600">Cell MSE</dt>
                      <dd className="num text-ink-900">{formatMse(mse[selected])}</dd>
                    </>
                  )}
                  <dt className="text-ink-600">Mean</dt>
                  <dd className="num text-ink-900">{codewordMean(codebook.codewords[selected]).toFixed(1)}</dd>
                </dl>
              )}
            </div>
          </div>
        </Panel>

        <StructureAtlas teamId={teamId} codebook={codebook} />

        <div className="grid gap-6 lg:grid-cols-2">
          <Panel title="Usage" titleId="codebook-usage" description="Training vectors per cell, in atlas order">
            <HistogramChart title="Training vectors per cell" values={sequence.map((i) => codebook.usage[i])} valueLabel="vectors" categoryLabel="cell (atlas order)" highlight={highlight} />
          </Panel>
          <Panel title="Per-cell distortion" titleId="codebook-cell-mse" description="MSE per component of the vectors in each cell, in atlas order">
            {mse ? (
              <HistogramChart title="MSE per component in each cell" values={sequence.map((i) => mse[i])} valueLabel="MSE" categoryLabel="cell (atlas order)" highlight={highlight} />
            ) : (
              <p className="py-6 text-sm text-ink-600">Imported codebooks do not carry per-cell distortion.</p>
            )}
          </Panel>
        </div>

        <HeldOutPanel teamId={teamId} codebookId={codebook.id} meanRemoved={meanRemoved} structured={codebook.structure === 'tree' || codebook.structure === 'residual'} />

        <ModelPanels teamId={teamId} codebookId={codebook.id} trained={codebook.runId !== null} canCancel={canEvaluate} />

        <Panel
          title="Channel errors"
          titleId="codebook-channel"
          description="PSNR against bit-error rate: the raw payload of each held-out image sent through a binary symmetric channel and decoded, beside the expected PSNR of the closed form"
        >
          <div className="flex flex-col gap-6">
            {codebook.runId !== null ? (
              <ChannelCurveView teamId={teamId} codebookId={codebook.id} />
            ) : (
              <p className="text-sm text-ink-600">An imported codebook has no held-out images of its own; cellwright channel measures it on any folder.</p>
            )}
            {canEvaluate && <ReorderAction teamId={teamId} codebookId={codebook.id} />}
          </div>
        </Panel>

        {/* A trained codebook is evaluated by its run; an imported one only here (or right after its import). */}
        {canEvaluate && codebook.runId === null && (
          <Panel title="Evaluate on a held-out set" titleId="codebook-evaluate" description="Rate, MSE, PSNR and SSIM on images the codebook never saw.">
            <EvaluateCodebookForm
              teamId={teamId}
              codebookId={codebook.id}
              onQueued={() => void queryClient.invalidateQueries({ queryKey: codebookKeys.evaluations(teamId, codebook.id) })}
            />
          </Panel>
        )}

        <Panel
          title="Export"
          titleId="codebook-export"
          description="The codebook document (format cellwright-codebook, version 1) with its SHA-256 checksum, its codewords alone as a NumPy .npy file (float32, codewords × components), or the firmware bundle: fixed-point C header, C99 reference decoder, example program and README in one zip"
        >
          <div className="flex flex-col gap-4">
            <div className="flex flex-wrap items-center gap-4">
              {/* Every member may export: the export holds the same codewords this page already shows. */}
              <a href={codebookExportUrl(teamId, codebook.id)} download className={buttonClass('primary')}>
                Export JSON
              </a>
              <a href={codebookExportUrl(teamId, codebook.id, 'npy')} download className={buttonClass('secondary')}>
                Codewords .npy
              </a>
              <a href={firmwareZipUrl(teamId, codebook.id)} download className={buttonClass('secondary')}>
                Firmware bundle .zip
              </a>
              <p className="text-sm text-ink-700">
                SHA-256 <span className="num break-all text-ink-900">{codebook.checksum}</span>
              </p>
            </div>
            <FirmwareRounding teamId={teamId} codebookId={codebook.id} hasHeldOut={codebook.runId !== null} />
            <CautionNote />
            <p className="text-xs text-ink-600">Created {formatDateTime(codebook.createdAt)}</p>
          </div>
        </Panel>
      </div>
    </>
  );
}

function HeldOutPanel({ teamId, codebookId, meanRemoved, structured = false }: { teamId: number; codebookId: number; meanRemoved: boolean; structured?: boolean }) {
  const evaluations = useCodebookEvaluations(teamId, codebookId);
  const latest = evaluations.data?.[evaluations.data.length - 1];
  const [imageId, setImageId] = useState<number | null>(null);
  const image = latest?.images.find((i) => i.imageId === imageId) ?? latest?.images[0] ?? null;
  const info = useReconstructionInfo(teamId, codebookId, image?.imageId ?? null);

  return (
    <Panel title="Held-out images" titleId="codebook-viewer" description="Coded with this codebook and decoded again">
      {evaluations.isPending && <LoadingState label="Loading evaluations…" />}
      {evaluations.isError && <ErrorState message={messageOf(evaluations.error)} onRetry={() => void evaluations.refetch()} />}
      {evaluations.data && !image && <EmptyState title="Not evaluated yet">Once the codebook has been measured on held-out images, they can be inspected here.</EmptyState>}
      {latest && image && (
        <div className="flex flex-col gap-4">
          <div className="flex flex-wrap items-end gap-x-6 gap-y-3">
            <SelectField label="Image" value={image.imageId} onChange={(event) => setImageId(Number(event.target.value))} containerClassName="w-64">
              {latest.images.map((i) => (
                <option key={i.imageId} value={i.imageId}>
                  {i.fileName}
                </option>
              ))}
            </SelectField>
            <dl className="flex flex-wrap gap-x-5 gap-y-1 pb-2 text-sm" aria-label="Figures of this image">
              <div className="flex gap-1.5">
                <dt className="text-ink-600">Size</dt>
                <dd className="num">
                  {image.width}×{image.height}
                </dd>
              </div>
              {info.data && (
                <>
                  <div className="flex gap-1.5">
                    <dt className="text-ink-600">Encoded</dt>
                    <dd className="num" data-testid="encoded-bytes">
                      {formatBytes(info.data.encodedBytes)}
                    </dd>
                  </div>
                  <div className="flex gap-1.5">
                    <dt className="text-ink-600">Rate</dt>
                    <dd className="num">{formatBpp(info.data.bpp)}</dd>
                  </div>
                  <div className="flex gap-1.5">
                    <dt className="text-ink-600">Raw rate</dt>
                    <dd className="num" data-testid="raw-rate">
                      {formatBpp(image.bppRaw)} ({formatBytes(image.rawBytes)})
                    </dd>
                  </div>
                  <div className="flex gap-1.5">
                    <dt className="text-ink-600">PSNR</dt>
                    <dd className="num">{formatDb(info.data.psnr)}</dd>
                  </div>
                  <div className="flex gap-1.5">
                    <dt className="text-ink-600">SSIM</dt>
                    <dd className="num">{info.data.ssim === null ? '—' : info.data.ssim.toFixed(4)}</dd>
                  </div>
                </>
              )}
              {info.isPending && <dd className="text-ink-600">measuring…</dd>}
              {info.isError && <dd className="text-danger-700">{messageOf(info.error)}</dd>}
            </dl>
            <div className="flex gap-2 pb-1">
              <a href={indexMapUrl(teamId, codebookId, image.imageId)} download className={buttonClass('ghost', 'sm')}>
                Index map .npy
              </a>
              {meanRemoved && (
                <a href={indexMapUrl(teamId, codebookId, image.imageId, 'means')} download className={buttonClass('ghost', 'sm')}>
                  Block means .npy
                </a>
              )}
            </div>
          </div>
          <ReconstructionViewer teamId={teamId} codebookId={codebookId} image={image} />
          {structured && <StructureStepsViewer teamId={teamId} codebookId={codebookId} image={image} />}
        </div>
      )}
    </Panel>
  );
}

/**
 * The codebook read as a density of its training patches: anomaly scores and denoising on the held-out images of its
 * latest evaluation, with the caution these views carry.
 */
function ModelPanels({ teamId, codebookId, trained, canCancel }: { teamId: number; codebookId: number; trained: boolean; canCancel: boolean }) {
  const evaluations = useCodebookEvaluations(teamId, codebookId);
  const images = evaluations.data?.[evaluations.data.length - 1]?.images ?? [];
  if (images.length === 0) return null;
  return (
    <>
      <Panel
        title="Unusual blocks"
        titleId="codebook-anomalies"
        description="Each block scored against the codebook read as a mixture of its training patches; flagged where fewer than the chosen share of training blocks reach"
      >
        <div className="flex flex-col gap-4">
          <AnomalyView teamId={teamId} codebookId={codebookId} images={images} trained={trained} canCancel={canCancel} />
          <CautionNote text={MODEL_CAUTION} />
        </div>
      </Panel>
      <Panel title="Denoise" titleId="codebook-denoise" description="Synthetic Gaussian noise added to a held-out image and removed with the codebook's patches">
        <div className="flex flex-col gap-4">
          <DenoiseView teamId={teamId} codebookId={codebookId} images={images} canCancel={canCancel} />
          <CautionNote text={MODEL_CAUTION} />
        </div>
      </Panel>
    </>
  );
}
