import { useEffect, useRef, useState } from 'react';
import { ANOMALY_RATE, type AnomalyMap } from '../../../../server/contracts';
import { SelectField } from '../../../components/ui/field';
import { reconstructionImageUrl } from '../api/get-reconstruction';
import { findAnomalyJob } from '../api/find-model-job';
import { startAnomalyJob } from '../api/start-model-job';
import { useModelJob } from '../hooks/use-model-job';
import { ModelJobStatus } from './model-job-status';

type Image = { imageId: number; width: number; height: number; fileName: string };

const RATES = [0.01, ANOMALY_RATE.default, 0.0001] as const;
const MAP_WIDTH = 480;
const LIST_LIMIT = 12;
const TILE = 96;
// Flagged blocks are outlined in a colour the ramp never takes, as the command line's map does.
const OUTLINE = 'rgb(0, 255, 255)';

const clamp01 = (t: number) => (t <= 0 ? 0 : t >= 1 ? 1 : t);

/**
 * The heat map over the image: each block tinted along black–red–yellow–white by its negative log-likelihood, from the
 * image's lowest score (clear) to the threshold (saturated; to the image's highest when there is no threshold), and
 * flagged blocks outlined.
 */
function HeatMap({ teamId, codebookId, image, map }: { teamId: number; codebookId: number; image: Image; map: AnomalyMap }) {
  const canvasRef = useRef<HTMLCanvasElement>(null);
  const scale = Math.min(MAP_WIDTH / image.width, 4);
  const width = Math.round(image.width * scale);
  const height = Math.round(image.height * scale);

  useEffect(() => {
    const ctx = canvasRef.current?.getContext('2d');
    if (!ctx) return;
    ctx.clearRect(0, 0, width, height);
    const lo = Math.min(...map.nll);
    const hi = map.thresholds?.nll ?? Math.max(...map.nll);
    const flagged = new Set(map.flagged);
    map.nll.forEach((score, i) => {
      const v = clamp01(hi > lo ? (score - lo) / (hi - lo) : 0);
      const x = (i % map.blocksX) * map.blockWidth * scale;
      const y = Math.floor(i / map.blocksX) * map.blockHeight * scale;
      const w = Math.min(map.blockWidth * scale, width - x);
      const h = Math.min(map.blockHeight * scale, height - y);
      ctx.fillStyle = `rgba(${255 * clamp01(3 * v)}, ${255 * clamp01(3 * v - 1)}, ${255 * clamp01(3 * v - 2)}, ${0.7 * v})`;
      ctx.fillRect(x, y, w, h);
      if (flagged.has(i)) {
        ctx.strokeStyle = OUTLINE;
        ctx.lineWidth = 1.5;
        ctx.strokeRect(x + 0.75, y + 0.75, w - 1.5, h - 1.5);
      }
    });
  }, [map, scale, width, height]);

  return (
    <div className="relative w-fit overflow-hidden rounded-md border border-ink-200">
      <img
        src={reconstructionImageUrl(teamId, codebookId, image.imageId, 'original')}
        alt={`${image.fileName} as the codebook sees it`}
        width={width}
        height={height}
        className="block max-w-none select-none grayscale"
        style={{ imageRendering: 'pixelated' }}
        draggable={false}
      />
      <canvas ref={canvasRef} width={width} height={height} className="absolute inset-0" role="img" aria-label={`Anomaly heat map of ${image.fileName}: ${map.flagged.length} blocks flagged`} data-testid="anomaly-heat-map" />
    </div>
  );
}

/** One block with a block's width of its image around it, enlarged without smoothing, the block outlined. */
function BlockTile({ url, image, block }: { url: string; image: { width: number; height: number }; block: { x: number; y: number; width: number; height: number } }) {
  const s = TILE / (3 * Math.max(block.width, block.height));
  return (
    <div
      className="relative shrink-0 rounded border border-ink-200 bg-ink-100 bg-no-repeat"
      style={{
        width: 3 * block.width * s,
        height: 3 * block.height * s,
        backgroundImage: `url("${url}")`,
        backgroundSize: `${image.width * s}px ${image.height * s}px`,
        backgroundPosition: `${(block.width - block.x) * s}px ${(block.height - block.y) * s}px`,
        imageRendering: 'pixelated',
      }}
    >
      <div className="absolute" style={{ left: block.width * s, top: block.height * s, width: block.width * s, height: block.height * s, outline: `1.5px solid ${OUTLINE}` }} />
    </div>
  );
}

/**
 * Anomaly scores of held-out images: the heat map of one image at a false-alarm rate measured on the codebook's
 * training patches, and the most unusual blocks over the run's held-out images. Each is a job on the workers: a stored
 * result of the same request is shown, else a Compute button starts one, followed until its result is stored.
 */
export function AnomalyView({ teamId, codebookId, images, trained, canCancel }: { teamId: number; codebookId: number; images: Image[]; trained: boolean; canCancel: boolean }) {
  const [imageId, setImageId] = useState(images[0].imageId);
  const [rate, setRate] = useState<number>(ANOMALY_RATE.default);
  const image = images.find((i) => i.imageId === imageId) ?? images[0];
  const mapBody = { imageId: image.imageId, rate };
  const listBody = { rate, limit: LIST_LIMIT };
  const mapJob = useModelJob(teamId, `anomaly-map:${codebookId}:${image.imageId}:${rate}`, () => findAnomalyJob(teamId, codebookId, mapBody), () => startAnomalyJob(teamId, codebookId, mapBody));
  const listJob = useModelJob(teamId, `anomaly-list:${codebookId}:${rate}`, () => findAnomalyJob(teamId, codebookId, listBody), () => startAnomalyJob(teamId, codebookId, listBody), trained);
  const mapData = mapJob.view?.result?.type === 'anomaly-map' ? mapJob.view.result : undefined;
  const listData = listJob.view?.result?.type === 'anomaly-list' ? listJob.view.result : undefined;
  const sizes = new Map(images.map((i) => [i.imageId, i]));

  return (
    <div className="flex flex-col gap-4">
      <div className="flex flex-wrap items-end gap-x-6 gap-y-3">
        <SelectField label="Image" value={image.imageId} onChange={(event) => setImageId(Number(event.target.value))} containerClassName="w-64">
          {images.map((i) => (
            <option key={i.imageId} value={i.imageId}>
              {i.fileName}
            </option>
          ))}
        </SelectField>
        <SelectField label="False-alarm rate" value={rate} onChange={(event) => setRate(Number(event.target.value))} containerClassName="w-44">
          {RATES.map((r) => (
            <option key={r} value={r}>
              {`${r * 100} % of training blocks`}
            </option>
          ))}
        </SelectField>
      </div>
      <ModelJobStatus job={mapJob} label="Scoring the blocks" canCancel={canCancel} />
      {mapData && (
        <div className="flex flex-col gap-3 lg:flex-row">
          <HeatMap teamId={teamId} codebookId={codebookId} image={image} map={mapData} />
          <dl className="grid h-fit grid-cols-[auto_1fr] gap-x-3 gap-y-1 text-sm" aria-label="Anomaly figures">
            <dt className="text-ink-600">Flagged</dt>
            <dd className="num" data-testid="anomaly-flagged">
              {mapData.flagged.length} of {mapData.nll.length} blocks
            </dd>
            {mapData.thresholds && mapData.flaggedTrainingBlocks ? (
              <>
                <dt className="text-ink-600">Threshold</dt>
                <dd className="num">{mapData.thresholds.nll.toFixed(1)} nats a block</dd>
                <dt className="text-ink-600">Training blocks above it</dt>
                <dd className="num">
                  {mapData.flaggedTrainingBlocks.nll.toLocaleString('en-GB')} of {mapData.trainingBlocks.toLocaleString('en-GB')}
                </dd>
              </>
            ) : (
              <dd className="col-span-2 max-w-xs text-ink-600">An imported codebook brings no training images, so its scores have no threshold and nothing is flagged.</dd>
            )}
          </dl>
        </div>
      )}
      {trained && (
        <div className="flex flex-col gap-2">
          <h3 className="text-sm font-semibold text-ink-900">Most unusual blocks of the held-out images</h3>
          <ModelJobStatus job={listJob} label="Ranking the blocks" canCancel={canCancel} />
          {listData && (
            <ol className="flex flex-wrap gap-3" data-testid="anomaly-list">
              {listData.blocks.map((b, rank) => {
                const source = sizes.get(b.imageId) ?? { width: b.x + b.width, height: b.y + b.height };
                return (
                  <li key={`${b.imageId}:${b.x}:${b.y}`} className="flex w-32 flex-col gap-1 text-xs">
                    <BlockTile url={reconstructionImageUrl(teamId, codebookId, b.imageId, 'original')} image={source} block={b} />
                    <span className="truncate text-ink-800" title={b.fileName}>
                      {rank + 1}. {b.fileName}
                    </span>
                    <span className="num text-ink-600">
                      ({b.x}, {b.y}) · {b.nll.toFixed(1)} nats{b.flagged ? ' · flagged' : ''}
                    </span>
                  </li>
                );
              })}
            </ol>
          )}
        </div>
      )}
    </div>
  );
}
