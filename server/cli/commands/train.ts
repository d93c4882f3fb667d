import {
  BITS, COLOR_MODES, EPSILON, STAGES, INIT_HINTS, INIT_LABELS, INIT_METHODS, ITERATIONS, LAMBDA, MAX_LAMBDAS, MEAN_BITS, PATCH_SIDE, RUN_DEFAULTS, SEED, VECTOR_CAP, parsePatchShape, trainsEverySize, type InitMethod,
  serializeCodebook, type Codebook, type PatchInfo, type PreprocessingInfo,
} from '../../engine';
import { bitsRange, huffmanFigures, impliedBits, lambdaOutPath, STRUCTURE_HELP, structureOptionSpec, structurePlan, trainingTableSize, trainStructured } from '../structure-training';
import { choiceOption, intOption, numberOption, parseOptions, requiredString, stringOption, type OptionSpec, type ParsedOptions } from '../args';
import { CliUsageError } from '../cli-error';
import { checkKeepFolder, writeCodebookFiles } from '../codebook-files';
import type { CliContext } from '../context';
import { checkOutputFolder, writeOutputsAtomically } from '../files';
import { loadVectors, trainingVectorsFromFolder } from '../inputs';
import { progressBar } from '../progress';
import { fmt, jsonLine, table } from '../text-output';

export const TRAIN_HELP = `Usage: cellwright train (--vectors FILE.npy | --images DIR --patch WxH) --bits B --out CODEBOOK.json [options]

Trains a codebook of 2^B codewords with the generalised Lloyd algorithm and writes it as codebook JSON; with
--lambda, entropy-constrained codebooks from it, one per λ; with --structure tree or residual, a tree-structured
codebook (B bits a block by descent) or a residual one (stages summing to B bits).

Input (one of):
  --vectors FILE.npy    training vectors, a float32/float64 little-endian C-order .npy array (N × d; 1-D is N × 1)
  --images DIR          images in DIR (png, jpg, webp, tif, avif); needs --patch
Image options:
  --patch WxH           patch width × height in pixels, each ${PATCH_SIDE.min}..${PATCH_SIDE.max} (also allowed with --vectors, to record the geometry)
  --stride S            step between training patches in pixels (default: the patch size, non-overlapping)
  --color luma|rgb      luma (BT.601, default) or rgb (R,G,B interleaved per pixel)
  --mean-bits M         mean-removed VQ: code each block mean with M bits (1..${MEAN_BITS.max}), quantise the residual
  --vector-cap N        the vector cap (the studio's "Vector cap"): train on at most N vectors (${VECTOR_CAP.min}..${VECTOR_CAP.max}),
                        drawn at random (seeded) across images in proportion to area (default: every patch);
                        --max-vectors N and --sample N are the same option under its older names
Training:
  --bits B              codebook size 2^B, B from ${BITS.min} to ${BITS.max} (required; residual: index bits a block, up to
                        ${STAGES.max * BITS.max}, or left out with a stage list)
  --init METHOD         ${INIT_METHODS.map((m) => `${m}: ${INIT_LABELS[m]}${m === RUN_DEFAULTS.init ? ' (default)' : ''}, ${INIT_HINTS[m]}`).join('\n                        ')}
  --epsilon E           stop when the relative drop in distortion is below E, ${EPSILON.min}..${EPSILON.max} (default ${RUN_DEFAULTS.epsilon});
                        training also stops when the distortion no longer drops
  --max-iterations N    the maximum iterations (the studio's "Maximum iterations"): at most N Lloyd iterations per
                        codebook size, ${ITERATIONS.min}..${ITERATIONS.max} (default ${RUN_DEFAULTS.maxIterations}); --max-iter N is the same option, its older name
  --seed N              random seed, ${SEED.min}..${SEED.max} (default ${RUN_DEFAULTS.seed})
  --threads N           worker threads (default: all cores the engine may use)
Entropy-constrained VQ (Chou, Lookabaugh & Gray 1989):
  --lambda LIST         λ values, ${LAMBDA.min}..${LAMBDA.max}: comma-separated (50,200,800) or A..B:N, N values evenly spaced in
                        log λ; at most ${MAX_LAMBDAS}. Each trains from the 2^B-codeword codebook, minimising squared error + λ·bits
                        per vector, drops the cells that empty out (larger λ: fewer codewords, lower rate), and stores the
                        canonical Huffman code (lengths ≤ 16 bits) of its training usage; encode writes indices in that code
${STRUCTURE_HELP}Output:
  --out FILE            codebook JSON to write (written atomically); with several λ values, FILE.lambda-<λ>.json each
  --keep-sizes DIR      also keep every size the pass trained on the way (with --init split: 2^0 … 2^B codewords) in
                        DIR, an existing folder, one codebook JSON file each named WxH-COLOR[-meanM][-sS]-bB.json
  --json                print one JSON object with the result on stdout
`;

/** Options read by imageSettings(); `sweep` accepts the same ones. */
export const imageOptionSpec: OptionSpec = {
  stride: { type: 'string' },
  color: { type: 'string' },
  'mean-bits': { type: 'string' },
  'vector-cap': { type: 'string' },
  'max-vectors': { type: 'string' },
  sample: { type: 'string' },
};

/** Options read by trainingSettings(); `sweep` accepts the same ones. */
export const trainingOptionSpec: OptionSpec = {
  init: { type: 'string' },
  epsilon: { type: 'string' },
  'max-iterations': { type: 'string' },
  'max-iter': { type: 'string' },
  seed: { type: 'string' },
  threads: { type: 'string' },
};

const SPEC: OptionSpec = {
  vectors: { type: 'string' },
  images: { type: 'string' },
  patch: { type: 'string' },
  bits: { type: 'string' },
  ...imageOptionSpec,
  ...trainingOptionSpec,
  ...structureOptionSpec,
  out: { type: 'string' },
  'keep-sizes': { type: 'string' },
  json: { type: 'boolean' },
};

export interface TrainingSettings {
  init: InitMethod;
  epsilon?: number;
  maxIterations?: number;
  seed?: number;
  threads?: number;
}

/** The option to read of a name and its older names; giving two of them is refused rather than one silently winning. */
export function aliased(values: ParsedOptions, name: string, ...older: string[]): string {
  const given = [name, ...older].filter((n) => values[n] !== undefined);
  if (given.length > 1) throw new CliUsageError(`--${given.slice(1).join(' and --')} ${given.length > 2 ? 'are older names' : 'is the older name'} of --${name}; give one of them`);
  return given[0] ?? name;
}

export function trainingSettings(values: ParsedOptions): TrainingSettings {
  return {
    init: choiceOption(values, 'init', INIT_METHODS) ?? RUN_DEFAULTS.init,
    epsilon: numberOption(values, 'epsilon', EPSILON),
    maxIterations: intOption(values, aliased(values, 'max-iterations', 'max-iter'), ITERATIONS),
    seed: intOption(values, 'seed', SEED),
    threads: intOption(values, 'threads', { min: 1, max: 1024 }),
  };
}

export function imageSettings(values: ParsedOptions) {
  const patchText = stringOption(values, 'patch');
  const meanBits = intOption(values, 'mean-bits', { min: 1, max: MEAN_BITS.max });
  return {
    patch: patchText === undefined ? undefined : parsePatchShape(patchText),
    color: choiceOption(values, 'color', COLOR_MODES) ?? RUN_DEFAULTS.color,
    stride: intOption(values, 'stride', { min: 1, max: 1 << 16 }),
    sample: intOption(values, aliased(values, 'vector-cap', 'max-vectors', 'sample'), VECTOR_CAP),
    preprocessing: (meanBits === undefined ? { kind: 'none' } : { kind: 'mean-removed', meanBits }) as PreprocessingInfo,
  };
}

export async function runTrain(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('train', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(TRAIN_HELP);
    return;
  }
  const vectorsPath = stringOption(values, 'vectors');
  const imagesDir = stringOption(values, 'images');
  if ((vectorsPath === undefined) === (imagesDir === undefined)) throw new CliUsageError('"cellwright train" needs exactly one of --vectors and --images');
  const bits = intOption(values, 'bits', bitsRange(values)) ?? impliedBits(values);
  if (bits === undefined) throw new CliUsageError('"cellwright train" needs --bits');
  const out = requiredString(values, 'out', 'train');
  const plan = structurePlan(values, bits);
  const settings = trainingSettings(values);
  const img = imageSettings(values);
  const keepDir = stringOption(values, 'keep-sizes');
  if (keepDir !== undefined && !trainsEverySize(settings.init)) {
    throw new CliUsageError(`--keep-sizes needs an init that trains every size in one pass (split); ${settings.init} trains 2^${bits} codewords only`);
  }
  await checkOutputFolder(out);
  if (keepDir !== undefined) await checkKeepFolder(keepDir, '--keep-sizes');

  let vectors: Float32Array;
  let dimension: number;
  let patch: PatchInfo | null = null;
  let source: string;
  if (vectorsPath !== undefined) {
    for (const name of ['stride', 'mean-bits', 'vector-cap', 'max-vectors', 'sample'] as const) {
      if (values[name] !== undefined) throw new CliUsageError(`--${name} applies to --images, not --vectors`);
    }
    const npy = await loadVectors(vectorsPath);
    vectors = npy.data;
    dimension = npy.cols;
    source = vectorsPath;
    if (img.patch) {
      patch = { ...img.patch, channels: img.color === 'rgb' ? 3 : 1, color: img.color };
      const want = patch.width * patch.height * patch.channels;
      if (want !== dimension) throw new CliUsageError(`--patch ${patch.width}x${patch.height} ${patch.color} means ${want} components, ${vectorsPath} has ${dimension}`);
    } else if (values.color !== undefined) {
      throw new CliUsageError('--color with --vectors needs --patch');
    }
  } else {
    if (!img.patch) throw new CliUsageError('"cellwright train --images" needs --patch WxH');
    patch = { ...img.patch, channels: img.color === 'rgb' ? 3 : 1, color: img.color };
    const loading = progressBar(ctx, 'reading images');
    const extracted = await trainingVectorsFromFolder(
      ctx,
      imagesDir!,
      'image folder',
      { patch: img.patch, color: img.color, stride: img.stride, sample: img.sample, seed: settings.seed, preprocessing: img.preprocessing, codebookSize: trainingTableSize(plan, bits), threads: settings.threads },
      loading,
    );
    loading.done();
    vectors = extracted.vectors;
    dimension = extracted.dimension;
    source = imagesDir!;
  }

  const started = Date.now();
  const bar = progressBar(ctx, 'training');
  let codebooks: Codebook[];
  try {
    codebooks = await trainStructured(
      plan,
      vectors,
      dimension,
      {
        bits,
        ...settings,
        signal: ctx.signal,
        patch,
        preprocessing: vectorsPath !== undefined ? { kind: 'none' } : img.preprocessing,
        source,
        stride: img.stride,
        sample: img.sample,
        onProgress: (p) => bar.update(p.fraction, `K=${p.size} it ${p.iteration} D=${p.distortion.toPrecision(5)}`),
      },
      (done, total, lambda) => bar.update(done / total, `λ=${lambda} (${done}/${total})`),
      (p) => bar.update(0, `step ${p.step} D=${p.distortion.toPrecision(5)}`),
    );
  } finally {
    bar.done();
  }
  if (plan.structure === 'full' && plan.lambdas !== null) {
    await writeLambdaBooks(ctx, codebooks, out, Date.now() - started, values.json === true);
    return;
  }
  const book = codebooks[codebooks.length - 1];
  const kept = keepDir === undefined ? null : await writeCodebookFiles(keepDir, codebooks);
  await writeOutputsAtomically([{ path: out, data: serializeCodebook(book) }]);
  const elapsedMs = Date.now() - started;

  if (values.json) {
    ctx.stdout.write(
      jsonLine({
        command: 'train',
        out,
        bits: book.bits,
        size: book.size,
        dimension: book.dimension,
        vectorCount: book.training.vectorCount,
        iterations: book.training.iterations,
        distortion: book.training.distortion,
        init: book.training.init,
        seed: book.training.seed,
        epsilon: book.training.epsilon,
        patch: book.patch,
        preprocessing: book.preprocessing,
        structure: book.structure.kind,
        ...(book.structure.kind === 'residual' ? { stages: book.structure.bits, search: book.structure.search } : {}),
        ...(book.structure.kind === 'tree' ? { balanced: book.structure.balanced } : {}),
        checksum: book.checksum,
        elapsedMs,
        sizes: codebooks.map((c, i) => ({ size: c.size, iterations: c.training.iterations, distortion: c.training.distortion, file: kept?.[i] ?? null })),
      }),
    );
    return;
  }
  ctx.stdout.write(
    `trained ${book.size} ${book.structure.kind === 'full' ? '' : `${book.structure.kind} table `}codewords of dimension ${book.dimension} on ${book.training.vectorCount} vectors (${book.training.init}, ${(elapsedMs / 1000).toFixed(1)} s)\n` +
      table(
        ['size', 'iterations', 'MSE/component'],
        codebooks.map((c) => [c.size, c.training.iterations, fmt.mse(c.training.distortion)]),
      ) +
      (kept ? `kept ${kept.length} sizes in ${keepDir}\n` : '') +
      `wrote ${out}\n`,
  );
}

/** Writes one entropy-constrained codebook per λ (one file, or FILE.lambda-<λ>.json each) and reports their figures. */
async function writeLambdaBooks(ctx: CliContext, books: Codebook[], out: string, elapsedMs: number, json: boolean): Promise<void> {
  const rows = books.map((book) => {
    const h = huffmanFigures(book)!;
    return { book, path: books.length === 1 ? out : lambdaOutPath(out, h.lambda), ...h };
  });
  await writeOutputsAtomically(rows.map((r) => ({ path: r.path, data: serializeCodebook(r.book) })));
  if (json) {
    const codebooks = rows.map((r) => ({
      out: r.path, lambda: r.lambda, size: r.book.size, iterations: r.book.training.iterations, distortion: r.book.training.distortion,
      indexEntropy: r.entropy, huffmanBits: r.huffmanBits, maxCodeLength: Math.max(...(r.book.structure.kind === 'entropy-constrained' ? r.book.structure.codeLengths : [0])), checksum: r.book.checksum,
    }));
    ctx.stdout.write(jsonLine({ command: 'train', structure: 'entropy-constrained', vectorCount: books[0].training.vectorCount, dimension: books[0].dimension, elapsedMs, codebooks }));
    return;
  }
  ctx.stdout.write(
    `trained ${books.length} entropy-constrained codebook${books.length > 1 ? 's' : ''} of dimension ${books[0].dimension} on ${books[0].training.vectorCount} vectors (${(elapsedMs / 1000).toFixed(1)} s)\n` +
      table(
        ['λ', 'size', 'iterations', 'MSE/component', 'entropy bits/vector', 'Huffman bits/vector'],
        rows.map((r) => [r.lambda, r.book.size, r.book.training.iterations, fmt.mse(r.book.training.distortion), r.entropy.toFixed(4), r.huffmanBits.toFixed(4)]),
      ) +
      `wrote ${rows.map((r) => r.path).join(', ')}\n`,
  );
}
