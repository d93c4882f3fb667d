import { basename } from 'node:path';
import {
  EXACT, evaluate, IMAGE_CSV_COLUMNS, imageEvaluationCsv, measuredFigures, type Codebook, type ImageSetEvaluation, type VectorSetEvaluation,
} from '../../engine';
import { intOption, parseOptions, requiredString, stringOption, type OptionSpec } from '../args';
import { CliInputError, CliUsageError } from '../cli-error';
import type { CliContext } from '../context';
import { checkOutputFolder, writeOutputsAtomically } from '../files';
import { loadCodebook, loadImageFolder, loadVectors } from '../inputs';
import { progressBar } from '../progress';
import { fmt, jsonLine, table } from '../text-output';

export const EVAL_HELP = `Usage: cellwright eval --codebook CODEBOOK.json (--vectors FILE.npy | --images DIR) [--json] [--csv FILE.csv] [--threads N]

Measures rate and distortion of a codebook on held-out data.
  images:  MSE per pixel component and PSNR (10·log10(255²/MSE)) of the decoded 8-bit image, SSIM (Wang et al. 2004,
           on luma), and rates in bits per pixel: fixed ((index bits + mean bits) / patch pixels; index bits ceil(log2 K),
           or Σ stage bits for residual stages, the longest path for a tree), entropy (empirical entropy of the
           indices, per stage for residual stages, and means over the set) and actual (coded file bytes × 8 / pixels:
           for an entropy-constrained codebook, its Huffman code's length on the images, plus the file's header).
  vectors: MSE per component of the unrounded reconstruction and the fixed and entropy rates (per pixel of the codebook's
           patch; per component when it has none).
  tree codebooks: --json adds treeSearch { treeMse, fullSearchMse }, MSE per component of the blocks (less their means)
           under the tree's descent and under a full search over the same leaves: what tree search costs.
  --csv FILE.csv   also write the per-image figures, one row per image, with the columns of the studio's per-image
                   download: ${IMAGE_CSV_COLUMNS.join(', ')} (RFC 4180: comma-separated, CRLF line ends)
An exact reconstruction (MSE 0) has PSNR ${EXACT.text}: null in --json, ${EXACT.csv} in the CSV.
`;

const SPEC: OptionSpec = {
  codebook: { type: 'string' },
  vectors: { type: 'string' },
  images: { type: 'string' },
  threads: { type: 'string' },
  json: { type: 'boolean' },
  csv: { type: 'string' },
};

/** The codebook's structure kind, and λ for an entropy-constrained one. */
function structureFields(book: Codebook): { structure: string; lambda?: number } {
  return book.structure.kind === 'entropy-constrained' ? { structure: book.structure.kind, lambda: book.structure.lambda } : { structure: book.structure.kind };
}

export function imageReportJson(book: Codebook, report: ImageSetEvaluation) {
  const o = report.overall;
  return {
    command: 'eval',
    input: 'images',
    ...structureFields(book),
    bits: book.bits,
    size: book.size,
    dimension: book.dimension,
    images: report.images.length,
    ...measuredFigures(o),
    indexEntropy: o.indexEntropy,
    meanEntropy: o.meanEntropy,
    perImage: report.images.map((r) => ({ name: r.name, width: r.width, height: r.height, ...measuredFigures(r) })),
    usage: Array.from(report.usage),
    cellDistortion: Array.from(report.cellDistortion),
    ...(report.treeSearch ? { treeSearch: report.treeSearch } : {}),
  };
}

export function vectorReportJson(book: Codebook, report: VectorSetEvaluation) {
  return {
    command: 'eval',
    input: 'vectors',
    ...structureFields(book),
    bits: book.bits,
    size: book.size,
    dimension: book.dimension,
    vectors: report.vectorCount,
    mse: report.mse,
    bppFixed: report.bppFixed,
    bppEntropy: report.bppEntropy,
    rateUnit: book.patch ? 'bits per pixel' : 'bits per component',
    indexEntropy: report.indexEntropy,
    meanEntropy: report.meanEntropy,
    usage: Array.from(report.usage),
    cellDistortion: Array.from(report.cellDistortion),
    ...(report.treeSearch ? { treeSearch: report.treeSearch } : {}),
  };
}

/** The per-image CSV, with the columns and spelling of the studio's per-image download (engine evaluation-csv). */
export function imageCsv(codebookPath: string, book: Codebook, report: ImageSetEvaluation): string {
  return imageEvaluationCsv(
    report.images.map((r) => ({
      codebook: basename(codebookPath), bits: book.bits, codebookSize: book.size, image: basename(r.name), width: r.width, height: r.height,
      codedBytes: r.bytes, bppFixed: r.bppFixed, bppEntropy: r.bppEntropy, bppActual: r.bppActual, mse: r.mse, psnr: r.psnr, ssim: r.ssim,
    })),
  );
}

export async function runEval(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('eval', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(EVAL_HELP);
    return;
  }
  const codebookPath = requiredString(values, 'codebook', 'eval');
  const vectorsPath = stringOption(values, 'vectors');
  const imagesDir = stringOption(values, 'images');
  if ((vectorsPath === undefined) === (imagesDir === undefined)) throw new CliUsageError('"cellwright eval" needs exactly one of --vectors and --images');
  const csvPath = stringOption(values, 'csv');
  if (csvPath !== undefined && vectorsPath !== undefined) throw new CliUsageError('--csv writes per-image figures; it needs --images');
  if (csvPath !== undefined) await checkOutputFolder(csvPath);
  const threads = intOption(values, 'threads', { min: 1, max: 1024 });
  const book = await loadCodebook(codebookPath);

  if (vectorsPath !== undefined) {
    const npy = await loadVectors(vectorsPath);
    if (npy.cols !== book.dimension) {
      throw new CliInputError(`${vectorsPath} has vectors of dimension ${npy.cols}, codebook ${codebookPath} has dimension ${book.dimension}`);
    }
    const report = await evaluate(book, { vectors: npy.data, dimension: npy.cols }, { threads, signal: ctx.signal });
    if (values.json) {
      ctx.stdout.write(jsonLine(vectorReportJson(book, report)));
      return;
    }
    const unit = book.patch ? 'bpp' : 'bits/component';
    ctx.stdout.write(
      `${report.vectorCount} vectors, codebook K=${book.size} (dimension ${book.dimension})\n` +
        `MSE/component ${fmt.mse(report.mse)}   fixed ${fmt.bpp(report.bppFixed)} ${unit}   entropy ${fmt.bpp(report.bppEntropy)} ${unit}\n`,
    );
    return;
  }

  if (!book.patch) throw new CliInputError(`codebook ${codebookPath} was trained on raw vectors and has no patch geometry; evaluate it with --vectors`);
  const loading = progressBar(ctx, 'reading images');
  const images = await loadImageFolder(imagesDir!, book.patch.color, 'image folder', loading);
  loading.done();
  const bar = progressBar(ctx, 'evaluating');
  let report: ImageSetEvaluation;
  try {
    report = await evaluate(book, images, { threads, signal: ctx.signal, onImage: (done, total) => bar.update(done / total, `${done}/${total}`) });
  } finally {
    bar.done();
  }
  if (csvPath !== undefined) await writeOutputsAtomically([{ path: csvPath, data: imageCsv(codebookPath, book, report) }]);
  if (values.json) {
    ctx.stdout.write(jsonLine(imageReportJson(book, report)));
    return;
  }
  const rows = report.images.map((r) => [r.name, `${r.width}×${r.height}`, fmt.mse(r.mse), fmt.psnr(r.psnr), fmt.ssim(r.ssim), fmt.bpp(r.bppFixed), fmt.bpp(r.bppEntropy), fmt.bpp(r.bppActual)]);
  const o = report.overall;
  rows.push(['all', `${o.pixels} px`, fmt.mse(o.mse), fmt.psnr(o.psnr), fmt.ssim(o.ssim), fmt.bpp(o.bppFixed), fmt.bpp(o.bppEntropy), fmt.bpp(o.bppActual)]);
  ctx.stdout.write(table(['image', 'size', 'MSE', 'PSNR', 'SSIM', 'bpp fixed', 'bpp entropy', 'bpp actual'], rows));
}
