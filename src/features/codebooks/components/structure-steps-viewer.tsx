import { useState } from 'react';
import type { StructureStepsInfo } from '../../../../server/contracts';
import { ErrorState, LoadingState } from '../../../components/ui/states';
import { messageOf } from '../../../lib/api-client';
import { cx } from '../../../lib/cx';
import { reconstructionImageUrl } from '../api/get-reconstruction';
import { structureStepImageUrl, useStructureSteps } from '../api/get-structure-steps';
import { formatDb, formatMse } from '../format';

/** "Level 3", or the stages summed: "Stage 1", "Stages 1+2", "Stages 1+2+3". */
export function stepLabel(kind: StructureStepsInfo['kind'], step: number): string {
  if (kind === 'tree-level') return `Level ${step}`;
  return step === 1 ? 'Stage 1' : `Stages ${Array.from({ length: step }, (_, i) => i + 1).join('+')}`;
}

/** Widest a pane is drawn; smaller images are scaled up by a whole factor so blocks stay sharp. */
const PANE_MAX = 400;

type Image = { imageId: number; width: number; height: number; fileName: string };

/**
 * A tree's reconstruction when descent stops at a chosen level, or a residual codebook's after its first stages,
 * beside the full reconstruction, with the PSNR of every step (the server measures; this draws).
 */
export function StructureStepsViewer({ teamId, codebookId, image }: { teamId: number; codebookId: number; image: Image }) {
  const steps = useStructureSteps(teamId, codebookId, image.imageId);
  const [chosen, setChosen] = useState<number | null>(null);
  if (steps.isPending) return <LoadingState label="Measuring every step…" />;
  if (steps.isError) return <ErrorState message={messageOf(steps.error)} onRetry={() => void steps.refetch()} />;
  const { kind } = steps.data;
  const all = steps.data.steps;
  // First shown: the shallowest step that is not the full reconstruction itself (level 1, or stage 1).
  const fallback = all[Math.min(kind === 'tree-level' ? 1 : 0, all.length - 1)].step;
  const current = all.find((s) => s.step === chosen) ?? all.find((s) => s.step === fallback)!;
  const last = all[all.length - 1];
  const scale = Math.max(1, Math.floor(PANE_MAX / image.width));
  const width = Math.min(PANE_MAX, image.width * scale);
  const what = kind === 'tree-level' ? 'Level' : 'Stages';

  return (
    <section className="flex flex-col gap-3" aria-labelledby="structure-steps-title">
      <h3 id="structure-steps-title" className="text-sm font-semibold text-ink-900">
        {kind === 'tree-level' ? 'Descent stopped at a level' : 'Stages summed'}
      </h3>
      <div role="radiogroup" aria-label={what} className="flex flex-wrap gap-1.5">
        {all.map((s) => (
          <button
            key={s.step}
            type="button"
            role="radio"
            aria-checked={s.step === current.step}
            onClick={() => setChosen(s.step)}
            className={cx(
              'rounded-md border px-2.5 py-1 text-sm',
              s.step === current.step ? 'border-ember-500 bg-ember-50 font-medium text-ink-900' : 'border-ink-200 bg-surface text-ink-700 hover:bg-ink-50',
            )}
          >
            {stepLabel(kind, s.step)}
          </button>
        ))}
      </div>
      <div className="grid gap-3 md:grid-cols-2">
        <figure className="flex min-w-0 flex-col gap-1.5">
          <img
            src={structureStepImageUrl(teamId, codebookId, image.imageId, current.step)}
            alt={`${stepLabel(kind, current.step)} reconstruction of ${image.fileName}`}
            width={width}
            height={Math.round((image.height * width) / image.width)}
            className="max-w-full rounded-md border border-ink-200"
            style={{ imageRendering: 'pixelated' }}
            data-testid="step-image"
          />
          <figcaption className="text-sm text-ink-800" data-testid="step-caption">
            {stepLabel(kind, current.step)}: <span className="num">{formatDb(current.psnr)}</span>
          </figcaption>
        </figure>
        <figure className="flex min-w-0 flex-col gap-1.5">
          <img
            src={reconstructionImageUrl(teamId, codebookId, image.imageId, 'reconstruction')}
            alt={`Full reconstruction of ${image.fileName}`}
            width={width}
            height={Math.round((image.height * width) / image.width)}
            className="max-w-full rounded-md border border-ink-200"
            style={{ imageRendering: 'pixelated' }}
          />
          <figcaption className="text-sm text-ink-800">
            Full ({stepLabel(kind, last.step).toLowerCase()}): <span className="num">{formatDb(last.psnr)}</span>
          </figcaption>
        </figure>
      </div>
      <table className="w-full max-w-xl text-sm" data-testid="step-table">
        <caption className="sr-only">PSNR at every step of {image.fileName}</caption>
        <thead>
          <tr className="border-b border-ink-200 text-left text-ink-600">
            <th scope="col" className="py-1 pr-4 font-medium">
              Step
            </th>
            <th scope="col" className="py-1 pr-4 text-right font-medium">
              Index bits per block
            </th>
            <th scope="col" className="py-1 pr-4 text-right font-medium">
              MSE
            </th>
            <th scope="col" className="py-1 text-right font-medium">
              PSNR
            </th>
          </tr>
        </thead>
        <tbody>
          {all.map((s) => (
            <tr key={s.step} className={cx('border-b border-ink-100', s.step === current.step && 'bg-ember-50')} aria-current={s.step === current.step ? 'true' : undefined}>
              <th scope="row" className="py-1 pr-4 text-left font-normal text-ink-800">
                {stepLabel(kind, s.step)}
              </th>
              <td className="num py-1 pr-4 text-right">{s.indexBits.toFixed(2)}</td>
              <td className="num py-1 pr-4 text-right">{formatMse(s.mse)}</td>
              <td className="num py-1 text-right">{formatDb(s.psnr)}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </section>
  );
}
