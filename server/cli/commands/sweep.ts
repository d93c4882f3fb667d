import {
  availableBaselineCodecs, BD_METHOD_LABELS, BD_METHODS, BD_MIN_OVERLAP_FRACTION, baselines, bdAgainstCodecs, CURVE_CSV_COLUMNS, curveCsv, DEFAULT_BD_METHOD, fixedRateBits,
  DEFAULT_QUALITIES, evaluate, EXACT, MAX_BITS, trainCodebooks, trainsEverySize,
  type BaselineCodec, type BdTableRow, type Codebook, type CurveCsvPoint, type PatchInfo,
} from '../../engine';
import { choiceOption, intListOption, listOption, parseOptions, rangeOption, requiredString, stringOption, type OptionSpec } from '../args';
import { CliInputError, CliUsageError } from '../cli-error';
import { checkKeepFolder, codebookFileName, writeCodebookFiles } from '../codebook-files';
import type { CliContext } from '../context';
import { checkOutputFolder, writeOutputsAtomically } from '../files';
import { loadImageFolder, trainingVectorsFromFolder } from '../inputs';
import { progressBar } from '../progress';
import { fmt, jsonLine, table } from '../text-output';
import { bdNote, signedFigure } from './bd';
import { aliased, imageOptionSpec, imageSettings, trainingOptionSpec, trainingSettings } from './train';
import { bitsRange, STRUCTURE_HELP, structureOptionSpec, structurePlan, trainingTableSize, trainStructured } from '../structure-training';

export const SWEEP_HELP = `Usage: cellwright sweep --images TRAIN_DIR --held-out DIR --patch WxH --bits A..B --out CURVE.csv [options]

The command line's form of a studio run over a range of b (the run's "Index bits b" from A to B): trains codebooks of
2^A … 2^B codewords on the training images in TRAIN_DIR (split init trains every size in one LBG pass), evaluates each
on the held-out images in DIR (kept out of training), optionally adds standard-codec baselines measured the same way,
and writes the rate–distortion curve as CSV.
  --held-out DIR        the held-out images (--heldout DIR is the same option, its older name)
  --baseline LIST       comma-separated jpeg, webp, avif (avif only where this build encodes it)
  --qualities LIST      codec qualities to sweep (default ${DEFAULT_QUALITIES.join(',')})
  --lambda LIST         entropy-constrained codebooks instead, one per λ, from the 2^B-codeword codebook (give --bits B,
                        one size); as for "cellwright train"
  --stride S            step between training patches in pixels (default: the patch size, non-overlapping)
  --structure tree|residual and its options below: one tree or residual codebook per b from A to B (residual: --stages
                        S shares each b; a stage list is one b, their sum)
  --color, --mean-bits, --vector-cap, --init, --epsilon, --max-iterations, --seed, --threads
                        as for "cellwright train"
  --out-dir DIR         also keep every codebook the sweep trains in DIR (an existing folder), one codebook JSON file
                        each, named by its configuration: WxH-COLOR[-meanM][-sS]-bB.json (e.g. 4x4-luma-b6.json)
  --method M            how the Bjøntegaard figures draw each curve (default ${DEFAULT_BD_METHOD}): ${BD_METHODS.map((m) => `${m}, ${BD_METHOD_LABELS[m]}`).join('; ')}
  --json                print one JSON object on stdout instead of the tables (shape below)
With --baseline the sweep also gives BD-rate (mean rate change at equal PSNR, percent; negative: fewer bits) and
BD-PSNR (mean PSNR change at equal rate, dB) of the codebooks on their actual rate against each codec, exactly as
"cellwright bd" gives them for the curve file: averaged only over the interval both curves share, flagged "short
overlap" under ${Math.round(BD_MIN_OVERLAP_FRACTION * 100)} % of the shorter curve's range.
${STRUCTURE_HELP}CSV columns, those of the studio's curve download (RFC 4180: comma-separated, CRLF line ends):
  ${CURVE_CSV_COLUMNS.join(', ')}
Empty where a column does not apply (codebook is the studio's codebook id, so empty here); psnr_db is ${EXACT.csv} for an
exact reconstruction.
JSON (--json), one object:
  { "command": "sweep", "out": CURVE.csv, "outDir": DIR or null,
    "points": [ one per CSV row: codec, bits, codebookSize, quality, bppFixed, bppEntropy, bppActual, mse, psnr, ssim,
                and for a codebook "file" (its path under --out-dir, else null) ],
    "codebooks": [ { bits, size, file, checksum, iterations, distortion } ],
    "bd": { "method", "rate": "actual", "minOverlapFraction", "rows": [ the rows of "cellwright bd --json" ] } }
  psnr is null for an exact reconstruction (JSON has no infinity); bd.rows is empty without --baseline.
`;

const SPEC: OptionSpec = {
  images: { type: 'string' },
  'held-out': { type: 'string' },
  heldout: { type: 'string' },
  patch: { type: 'string' },
  bits: { type: 'string' },
  baseline: { type: 'string' },
  qualities: { type: 'string' },
  ...imageOptionSpec,
  ...trainingOptionSpec,
  ...structureOptionSpec,
  out: { type: 'string' },
  'out-dir': { type: 'string' },
  method: { type: 'string' },
  json: { type: 'boolean' },
};

export async function runSweep(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('sweep', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(SWEEP_HELP);
    return;
  }
  const trainDir = requiredString(values, 'images', 'sweep');
  const heldoutDir = requiredString(values, aliased(values, 'held-out', 'heldout'), 'sweep');
  const out = requiredString(values, 'out', 'sweep');
  const range = rangeOption(values, 'bits', values.structure === 'residual' ? bitsRange(values) : { min: 0, max: MAX_BITS });
  if (!range) throw new CliUsageError('"cellwright sweep" needs --bits A..B');
  const plan = structurePlan(values, range[1]);
  if (plan.structure === 'residual' && plan.stagesText.includes(',') && range[0] !== range[1]) {
    throw new CliUsageError('a residual stage list is one rate: give --bits B (their sum), or --stages S to share each b of a range');
  }
  if (plan.structure === 'full' && plan.lambdas !== null && range[0] !== range[1]) {
    throw new CliUsageError('--lambda draws its curve from one starting size: give --bits B, not a range');
  }
  const img = imageSettings(values);
  if (!img.patch) throw new CliUsageError('"cellwright sweep" needs --patch WxH');
  const settings = trainingSettings(values);
  const codecs = listOption(values, 'baseline', ['jpeg', 'webp', 'avif'] as const) ?? [];
  const qualities = intListOption(values, 'qualities', { min: 1, max: 100 }) ?? [...DEFAULT_QUALITIES];
  const method = choiceOption(values, 'method', BD_METHODS) ?? DEFAULT_BD_METHOD;
  const outDir = stringOption(values, 'out-dir');
  if (codecs.includes('avif') && !(await availableBaselineCodecs()).includes('avif')) throw new CliInputError('this build of sharp cannot encode AVIF; drop it from --baseline');
  await checkOutputFolder(out);
  if (outDir !== undefined) await checkKeepFolder(outDir, '--out-dir');

  const patch: PatchInfo = { ...img.patch, channels: img.color === 'rgb' ? 3 : 1, color: img.color };
  const [lo, hi] = range;
  const loading = progressBar(ctx, 'reading images');
  const { vectors, dimension } = await trainingVectorsFromFolder(
    ctx,
    trainDir,
    'training folder',
    { patch: img.patch, color: img.color, stride: img.stride, sample: img.sample, seed: settings.seed, preprocessing: img.preprocessing, codebookSize: trainingTableSize(plan, hi), threads: settings.threads },
    loading,
  );
  const heldout = await loadImageFolder(heldoutDir, img.color, 'held-out folder', loading);
  loading.done();

  const bar = progressBar(ctx, 'training');
  const books: Codebook[] = [];
  try {
    const common = { ...settings, signal: ctx.signal, patch, preprocessing: img.preprocessing, source: trainDir, stride: img.stride, sample: img.sample };
    if (plan.structure !== 'full') {
      // One codebook per b: a tree balanced to depth b, or residual stages sharing b bits.
      for (let b = lo; b <= hi; b += 1) {
        const bPlan = plan.structure === 'residual' ? structurePlan(values, b) : plan;
        bar.update((b - lo) / (hi - lo + 1), `b=${b}`);
        books.push(...(await trainStructured(bPlan, vectors, dimension, { ...common, bits: b })));
      }
    } else if (plan.lambdas !== null) {
      books.push(...(await trainStructured(plan, vectors, dimension, { ...common, bits: hi }, (d, t, lambda) => bar.update(d / t, `λ=${lambda}`))));
    } else if (trainsEverySize(settings.init)) {
      // One LBG pass to 2^B yields every smaller power of two on the way.
      const all = await trainCodebooks(vectors, dimension, { ...common, bits: hi, onProgress: (p) => bar.update(p.fraction, `K=${p.size}`) });
      books.push(...all.filter((b) => b.bits >= lo));
    } else {
      for (let b = lo; b <= hi; b += 1) {
        const [book] = await trainCodebooks(vectors, dimension, { ...common, bits: b, onProgress: (p) => bar.update((b - lo + p.fraction) / (hi - lo + 1), `K=${p.size}`) });
        books.push(book);
      }
    }
  } finally {
    bar.done();
  }

  const rows: CurveCsvPoint[] = [];
  const shown: (string | number)[][] = [];
  const evalBar = progressBar(ctx, 'evaluating');
  try {
    for (const [i, book] of books.entries()) {
      const r = (await evaluate(book, heldout, { threads: settings.threads, signal: ctx.signal })).overall;
      rows.push({ codec: 'vq', codebook: null, bits: fixedRateBits(book), codebookSize: book.size, quality: null, bppFixed: r.bppFixed, bppEntropy: r.bppEntropy, bppActual: r.bppActual, mse: r.mse, psnr: r.psnr, ssim: r.ssim });
      const label = book.structure.kind === 'entropy-constrained' ? `ecvq λ=${book.structure.lambda} K=${book.size}`
        : book.structure.kind === 'tree' ? `tree b=${fixedRateBits(book)} K=${book.size}`
        : book.structure.kind === 'residual' ? `residual ${book.structure.bits.join('+')} K=${book.size}` : `vq K=${book.size}`;
      shown.push([label, fmt.bpp(r.bppFixed), fmt.bpp(r.bppEntropy), fmt.bpp(r.bppActual), fmt.mse(r.mse), fmt.psnr(r.psnr), fmt.ssim(r.ssim)]);
      evalBar.update((i + 1) / books.length, `K=${book.size}`);
    }
    if (codecs.length > 0) {
      const points = await baselines(heldout, { codecs: codecs as BaselineCodec[], qualities, signal: ctx.signal, onPoint: (d, t) => evalBar.update(d / t, 'baselines') });
      for (const p of points) {
        rows.push({ codec: p.codec, codebook: null, bits: null, codebookSize: null, quality: p.quality, bppFixed: null, bppEntropy: null, bppActual: p.bpp, mse: p.mse, psnr: p.psnr, ssim: p.ssim });
        shown.push([`${p.codec} q=${p.quality}`, '', '', fmt.bpp(p.bpp), fmt.mse(p.mse), fmt.psnr(p.psnr), fmt.ssim(p.ssim)]);
      }
    }
  } finally {
    evalBar.done();
  }
  // Codebook files first: a curve file never names codebooks that were not written.
  const files = outDir === undefined ? books.map(() => null) : await writeCodebookFiles(outDir, books);
  await writeOutputsAtomically([{ path: out, data: curveCsv(rows) }]);
  const bd = bdAgainstCodecs(rows, 'actual', method);
  if (values.json) {
    ctx.stdout.write(jsonLine(sweepJson({ out, outDir: outDir ?? null, rows, books, files, method, bd })));
    return;
  }
  const bdTable =
    bd.length === 0
      ? ''
      : table(['against', 'BD-rate', 'BD-PSNR', 'note'], bd.map((r) => [r.reference, signedFigure(r.bdRate, 2, '%'), signedFigure(r.bdPsnr, 3, 'dB'), bdNote(r)])) +
        `BD figures: codebooks on the actual rate, curves drawn by ${BD_METHOD_LABELS[method]}, over the interval each pair shares\n`;
  const kept = outDir === undefined ? '' : `kept ${books.length} codebooks in ${outDir}: ${books.map(codebookFileName).join(', ')}\n`;
  ctx.stdout.write(table(['point', 'bpp fixed', 'bpp entropy', 'bpp actual', 'MSE', 'PSNR', 'SSIM'], shown) + bdTable + kept + `wrote ${out}\n`);
}

/** The documented --json object (see SWEEP_HELP). */
function sweepJson(r: { out: string; outDir: string | null; rows: CurveCsvPoint[]; books: Codebook[]; files: (string | null)[]; method: string; bd: BdTableRow[] }) {
  const fileOf = new Map(r.books.map((b, i) => [b.size, r.files[i]]));
  return {
    command: 'sweep',
    out: r.out,
    outDir: r.outDir,
    points: r.rows.map(({ codebook: _studioId, ...p }) => ({ ...p, file: p.codec === 'vq' ? (fileOf.get(p.codebookSize!) ?? null) : null })),
    codebooks: r.books.map((b, i) => ({ bits: b.bits, size: b.size, file: r.files[i], checksum: b.checksum, iterations: b.training.iterations, distortion: b.training.distortion })),
    bd: { method: r.method, rate: 'actual', minOverlapFraction: BD_MIN_OVERLAP_FRACTION, rows: r.bd },
  };
}
