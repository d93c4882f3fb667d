import {
  addNoise, codebookMixture, denoise, DENOISE_ESTIMATORS, DENOISE_SIGMA, DENOISE_STEP, encodePng, meanSquaredError, MODEL_CAUTION, psnrForJson, psnrFromMse,
  RUN_DEFAULTS, SEED, type PatchMixture,
} from '../../engine';
import { choiceOption, intOption, numberOption, parseOptions, requiredString, stringOption, type OptionSpec } from '../args';
import { CliInputError, CliUsageError } from '../cli-error';
import type { CliContext } from '../context';
import { checkOutputFolder, writeOutputsAtomically } from '../files';
import { loadCodebook, loadImageFile } from '../inputs';
import { codebookTrainingVectorsFromFolder, trainingFolder } from '../model-inputs';
import { progressBar } from '../progress';
import { fmt, jsonLine } from '../text-output';

export const DENOISE_HELP = `Usage: cellwright denoise --codebook CODEBOOK.json --image IN [--sigma S | --add-noise S [--seed N]]
                         [--estimator hard|mean] [--step K] [--training DIR] --out OUT.png [--noisy NOISY.png] [--json]

Removes Gaussian noise with the codebook read as a density of its training patches (server/engine/model/README.md):
overlapping patches, each replaced by an estimate, averaged per pixel. Mean-removed codebooks keep each patch's mean.
  --sigma S          the noise's standard deviation on the 0..255 scale (${DENOISE_SIGMA.min} to ${DENOISE_SIGMA.max}); without it (and without
                     --add-noise) it is estimated from the image: median |finest diagonal Haar coefficient| / 0.6745
                     (Donoho & Johnstone 1994), which fine texture inflates
  --add-noise S      IN is the clean image: add seeded Gaussian noise of standard deviation S (clamped and rounded to
                     8-bit values), denoise that with σ = S and report the PSNR of the noisy and of the denoised image
                     against IN
  --seed N           the noise's seed (default ${RUN_DEFAULTS.seed})
  --estimator E      mean (default: the posterior mean under the mixture, each codeword's variance plus σ², the
                     least mean-squared error under the model) or hard (the nearest codeword)
  --step K           pixels between patch origins (${DENOISE_STEP.min} to ${DENOISE_STEP.max}, default ${DENOISE_STEP.default}: every position, slowest and best)
  --training DIR     the codebook's training images, for per-cell variances (default: the folder the codebook records
                     as its source, when it exists here; without either, every cell takes the codebook's pooled
                     training distortion)
  --noisy NOISY.png  with --add-noise, also write the noisy image
Caution: ${MODEL_CAUTION}
`;

const SPEC: OptionSpec = {
  codebook: { type: 'string' },
  image: { type: 'string' },
  sigma: { type: 'string' },
  'add-noise': { type: 'string' },
  seed: { type: 'string' },
  estimator: { type: 'string' },
  step: { type: 'string' },
  training: { type: 'string' },
  out: { type: 'string' },
  noisy: { type: 'string' },
  json: { type: 'boolean' },
};

export async function runDenoise(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('denoise', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(DENOISE_HELP);
    return;
  }
  const codebookPath = requiredString(values, 'codebook', 'denoise');
  const imagePath = requiredString(values, 'image', 'denoise');
  const out = requiredString(values, 'out', 'denoise');
  const sigmaGiven = numberOption(values, 'sigma', DENOISE_SIGMA);
  const added = numberOption(values, 'add-noise', DENOISE_SIGMA);
  if (sigmaGiven !== undefined && added !== undefined) throw new CliUsageError('give --sigma (a noisy image) or --add-noise (a clean one), not both');
  const seedGiven = intOption(values, 'seed', SEED);
  if (seedGiven !== undefined && added === undefined) throw new CliUsageError('--seed applies to --add-noise');
  const noisyPath = stringOption(values, 'noisy');
  if (noisyPath !== undefined && added === undefined) throw new CliUsageError('--noisy writes the noisy image of --add-noise');
  const estimator = choiceOption(values, 'estimator', DENOISE_ESTIMATORS) ?? 'mean';
  const step = intOption(values, 'step', DENOISE_STEP) ?? DENOISE_STEP.default;
  for (const p of [out, noisyPath]) if (p) await checkOutputFolder(p);
  const book = await loadCodebook(codebookPath);
  if (!book.patch) throw new CliInputError(`codebook ${codebookPath} was trained on raw vectors and has no patch geometry, so it cannot denoise images`);
  const folder = await trainingFolder(stringOption(values, 'training'), book);
  const input = await loadImageFile(imagePath, book.patch.color);
  const seed = seedGiven ?? RUN_DEFAULTS.seed;
  const noisy = added === undefined ? input : addNoise(input, added, seed);
  const bar = progressBar(ctx, 'training patches');
  let mixture: PatchMixture;
  try {
    mixture = codebookMixture(book, { trainingVectors: folder === undefined ? undefined : await codebookTrainingVectorsFromFolder(ctx, folder, book, bar) });
  } finally {
    bar.done();
  }
  const result = denoise(book, mixture, noisy, { sigma: added ?? sigmaGiven, estimator, step, signal: ctx.signal });
  const { width, height, channels } = input;
  const outputs = [{ path: out, data: await encodePng(result.pixels, width, height, channels) }];
  if (noisyPath) outputs.push({ path: noisyPath, data: await encodePng(Uint8Array.from(noisy.pixels), width, height, channels) });
  await writeOutputsAtomically(outputs);
  // Against the clean input (--add-noise only): the noisy image as its 8-bit file holds it, and the denoised output.
  const psnr = added === undefined ? null : { noisy: psnrFromMse(meanSquaredError(input.pixels, noisy.pixels)), denoised: psnrFromMse(meanSquaredError(input.pixels, result.pixels)) };
  if (values.json) {
    ctx.stdout.write(
      jsonLine({
        command: 'denoise', out, ...(noisyPath ? { noisy: noisyPath } : {}), width, height, estimator, step, sigma: result.sigma, sigmaEstimated: result.sigmaEstimated,
        ...(added !== undefined ? { seed } : {}), varianceSource: mixture.varianceSource, patches: result.patches,
        ...(psnr ? { psnrNoisy: psnrForJson(psnr.noisy), psnrDenoised: psnrForJson(psnr.denoised) } : {}),
      }),
    );
    return;
  }
  const figures = psnr ? `, PSNR noisy ${fmt.psnr(psnr.noisy)} → denoised ${fmt.psnr(psnr.denoised)}` : '';
  ctx.stdout.write(
    `${imagePath}: ${width}×${height}, σ ${result.sigma.toFixed(2)}${result.sigmaEstimated ? ' (estimated)' : ''}, ${estimator} estimator, step ${step}${figures}\n` +
      `wrote ${outputs.map((o) => o.path).join(', ')}\nCaution: ${MODEL_CAUTION}\n`,
  );
}
