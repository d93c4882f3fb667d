import { useState } from 'react';
import { Button } from '../../../components/ui/button';
import { SelectField } from '../../../components/ui/field';
import { findDenoiseJob } from '../api/find-model-job';
import { startDenoiseJob } from '../api/start-model-job';
import { formatDb } from '../format';
import { useModelJob } from '../hooks/use-model-job';
import { ModelJobStatus } from './model-job-status';

type Image = { imageId: number; width: number; height: number; fileName: string };

const SIGMAS = [5, 10, 20, 30] as const;
const STEPS = [1, 2, 4] as const;
const PANE_WIDTH = 240;

/**
 * Denoising of a held-out image with seeded synthetic noise: noisy, nearest codeword (hard) and posterior mean side by
 * side, each with its PSNR against the image as the codebook sees it. A job on the workers: a stored result of the
 * same request is shown, else a Compute button starts one, followed until its images are stored.
 */
export function DenoiseView({ teamId, codebookId, images, canCancel }: { teamId: number; codebookId: number; images: Image[]; canCancel: boolean }) {
  const [imageId, setImageId] = useState(images[0].imageId);
  const [sigma, setSigma] = useState(20);
  const [step, setStep] = useState(2);
  const [seed, setSeed] = useState(1);
  const image = images.find((i) => i.imageId === imageId) ?? images[0];
  const body = { imageId: image.imageId, sigma, seed, step };
  const job = useModelJob(teamId, `denoise:${codebookId}:${image.imageId}:${sigma}:${seed}:${step}`, () => findDenoiseJob(teamId, codebookId, body), () => startDenoiseJob(teamId, codebookId, body));
  const data = job.view?.result?.type === 'denoise' ? job.view.result : undefined;
  const scale = Math.min(PANE_WIDTH / image.width, 4);

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
        <SelectField label="Noise σ" value={sigma} onChange={(event) => setSigma(Number(event.target.value))} containerClassName="w-28">
          {SIGMAS.map((s) => (
            <option key={s} value={s}>
              {s}
            </option>
          ))}
        </SelectField>
        <SelectField label="Patch step" value={step} onChange={(event) => setStep(Number(event.target.value))} containerClassName="w-32">
          {STEPS.map((s) => (
            <option key={s} value={s}>
              {s === 1 ? '1 (every position)' : `${s} pixels`}
            </option>
          ))}
        </SelectField>
        <Button variant="secondary" onClick={() => setSeed((s) => s + 1)}>
          Draw new noise
        </Button>
        <span className="num pb-2 text-sm text-ink-600">seed {seed}</span>
      </div>
      <ModelJobStatus job={job} label="Adding noise and denoising" canCancel={canCancel} />
      {data && (
        <div className="grid gap-3 sm:grid-cols-2 xl:grid-cols-4" data-testid="denoise-views">
          {(
            [
              ['clean', 'Clean', undefined],
              ['noisy', `Noisy (σ ${sigma})`, data.psnr.noisy],
              ['hard', 'Nearest codeword', data.psnr.hard],
              ['mean', 'Posterior mean', data.psnr.mean],
            ] as const
          ).map(([view, label, psnr]) => (
            <figure key={view} className="flex min-w-0 flex-col gap-1.5">
              <img
                src={data.views[view]}
                alt={`${label} of ${image.fileName}`}
                width={Math.round(image.width * scale)}
                height={Math.round(image.height * scale)}
                className="max-w-none rounded-md border border-ink-200"
                style={{ imageRendering: 'pixelated' }}
              />
              <figcaption className="text-sm text-ink-800">
                <span className="font-medium">{label}</span>
                {psnr !== undefined && <span className="num text-ink-600" data-testid={`psnr-${view}`}>{` · PSNR ${formatDb(psnr)}`}</span>}
              </figcaption>
            </figure>
          ))}
        </div>
      )}
    </div>
  );
}
