import { basename, dirname, extname, join } from 'node:path';
import {
  ANOMALY_RATE, ANOMALY_SCORES, anomalyMapPng, anomalyModel, anomalyScores, MODEL_CAUTION, rankBlocks, type AnomalyModel, type Codebook, type ImageAnomalies,
} from '../../engine';
import { choiceOption, intOption, numberOption, parseOptions, requiredString, stringOption, type OptionSpec } from '../args';
import { CliInputError } from '../cli-error';
import type { CliContext } from '../context';
import { checkOutputFolder, writeOutputsAtomically } from '../files';
import { loadCodebook } from '../inputs';
import { codebookTrainingVectorsFromFolder, loadImagesAt, trainingFolder } from '../model-inputs';
import { progressBar } from '../progress';
import { jsonLine, table } from '../text-output';

const TOP_DEFAULT = 10;

export const ANOMALY_HELP = `Usage: cellwright anomaly --codebook CODEBOOK.json --images DIR|IMAGE [--training DIR] [--rate R] [--score nll|distance]
                         [--top N] [--map OUT.png] [--json]

Scores every coding block of held-out images against the codebook read as a density of its training patches (a
Gaussian mixture: one component per codeword, weighted by its usage, with each cell's variance measured on the training
patches; server/engine/model/README.md) and flags the blocks the training patches themselves rarely reach.
  --training DIR   the codebook's training images (default: the folder the codebook records as its source, when it
                   exists here); their patches are drawn again with the codebook's stride, vector cap and seed
  --rate R         false-alarm rate: flag blocks scoring above what all but a fraction R of the training patches
                   reach (the empirical 1 − R quantile, interpolated; default ${ANOMALY_RATE.default}, ${ANOMALY_RATE.min} to ${ANOMALY_RATE.max})
  --score S        nll (default: negative log-likelihood under the mixture, nats per block) or distance (squared
                   distance to the nearest codeword); both are reported
  --top N          also list the N most unusual blocks over all images (default ${TOP_DEFAULT})
  --map OUT.png    write a heat map: the image in grey, blocks tinted from the training median (clear) to the threshold
                   (white-hot), flagged blocks outlined in cyan; with several images, OUT-<image name>.png for each
  --json           per image its flagged blocks, each with x and y (pixel coordinates of its top-left corner),
                   nearest, distance and nll
Caution: ${MODEL_CAUTION}
`;

const SPEC: OptionSpec = {
  codebook: { type: 'string' },
  images: { type: 'string' },
  training: { type: 'string' },
  rate: { type: 'string' },
  score: { type: 'string' },
  top: { type: 'string' },
  map: { type: 'string' },
  json: { type: 'boolean' },
};

/** Where each image's map goes: OUT itself for one image, OUT-<image name>.png beside it for several. */
function mapPaths(out: string, results: ImageAnomalies[]): string[] {
  if (results.length === 1) return [out];
  const stem = basename(out, extname(out));
  const paths = results.map((r) => join(dirname(out), `${stem}-${basename(r.name, extname(r.name))}.png`));
  const clash = paths.find((p, i) => paths.indexOf(p) !== i);
  if (clash) throw new CliInputError(`two images would share the map ${clash}; give images with distinct names`);
  return paths;
}

function reportJson(codebookPath: string, book: Codebook, model: AnomalyModel, results: ImageAnomalies[], top: number, maps: string[]) {
  const c = model.calibration;
  const block = (b: ImageAnomalies['blocks'][number]) => ({ x: b.x, y: b.y, nearest: b.nearest, distance: b.distance, nll: b.nll });
  return {
    command: 'anomaly',
    codebook: codebookPath,
    size: book.size,
    dimension: book.dimension,
    rate: c.rate,
    score: c.score,
    varianceSource: model.mixture.varianceSource,
    trainingBlocks: c.trainingVectors,
    thresholds: c.thresholds,
    flaggedTrainingBlocks: c.flaggedTraining,
    images: results.map((r, i) => ({
      name: r.name,
      width: r.width,
      height: r.height,
      blockWidth: r.blockWidth,
      blockHeight: r.blockHeight,
      blocks: r.blocks.length,
      flagged: r.blocks.filter((b) => b.flagged).map(block),
      ...(maps.length ? { map: maps[i] } : {}),
    })),
    top: rankBlocks(results, c.score, top).map((b) => ({ image: b.name, ...block(b), flagged: b.flagged })),
  };
}

export async function runAnomaly(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('anomaly', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(ANOMALY_HELP);
    return;
  }
  const codebookPath = requiredString(values, 'codebook', 'anomaly');
  const imagesPath = requiredString(values, 'images', 'anomaly');
  const rate = numberOption(values, 'rate', ANOMALY_RATE) ?? ANOMALY_RATE.default;
  const score = choiceOption(values, 'score', ANOMALY_SCORES) ?? 'nll';
  const top = intOption(values, 'top', { min: 0, max: 100_000 }) ?? TOP_DEFAULT;
  const mapPath = stringOption(values, 'map');
  if (mapPath !== undefined) await checkOutputFolder(mapPath);
  const book = await loadCodebook(codebookPath);
  if (!book.patch) throw new CliInputError(`codebook ${codebookPath} was trained on raw vectors and has no patch geometry, so it cannot score images`);
  const folder = await trainingFolder(stringOption(values, 'training'), book);
  if (folder === undefined) {
    throw new CliInputError(`codebook ${codebookPath} records its source as "${book.training.source}", which is not a folder here; give its training images with --training DIR`);
  }
  const images = await loadImagesAt(imagesPath, book);
  const bar = progressBar(ctx, 'training patches');
  let model: AnomalyModel;
  try {
    const vectors = await codebookTrainingVectorsFromFolder(ctx, folder, book, bar);
    model = anomalyModel(book, vectors, { rate, score, signal: ctx.signal });
  } finally {
    bar.done();
  }
  const results = images.map((image) => anomalyScores(book, model, image, { signal: ctx.signal }));
  const maps = mapPath === undefined ? [] : mapPaths(mapPath, results);
  if (maps.length) {
    const outputs = await Promise.all(results.map(async (r, i) => ({ path: maps[i], data: await anomalyMapPng(images[i], r, model.calibration) })));
    await writeOutputsAtomically(outputs);
  }
  if (values.json) {
    ctx.stdout.write(jsonLine(reportJson(codebookPath, book, model, results, top, maps)));
    return;
  }
  const c = model.calibration;
  const lines = results.map((r) => `${r.name}: ${r.blocks.filter((b) => b.flagged).length} of ${r.blocks.length} blocks flagged`);
  ctx.stdout.write(
    `threshold (${c.score}) ${c.thresholds[c.score].toFixed(3)} at rate ${c.rate}: ${c.flaggedTraining[c.score]} of ${c.trainingVectors} training blocks above it\n` +
      `${lines.join('\n')}\n`,
  );
  const ranked = rankBlocks(results, c.score, top);
  if (ranked.length) ctx.stdout.write(table(['image', 'x', 'y', 'nll', 'distance', 'flagged'], ranked.map((b) => [basename(b.name), b.x, b.y, b.nll.toFixed(2), b.distance.toFixed(1), b.flagged ? 'yes' : ''])));
  if (maps.length) ctx.stdout.write(`wrote ${maps.join(', ')}\n`);
  ctx.stdout.write(`Caution: ${MODEL_CAUTION}\n`);
}
