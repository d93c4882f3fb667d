import { stat } from 'node:fs/promises';
import { basename, extname, join } from 'node:path';
import { encodeImage, indexMapNpy, meanCodesNpy, readContainer, writeNpy, type Codebook, type EncodedImage } from '../../engine';
import { choiceOption, intOption, parseOptions, requiredString, stringOption, type OptionSpec } from '../args';
import { CliInputError, CliUsageError } from '../cli-error';
import type { CliContext } from '../context';
import { readInput, writeOutputsAtomically } from '../files';
import { loadCodebook, loadImageFolder } from '../inputs';
import { progressBar } from '../progress';
import { jsonLine } from '../text-output';

const TARGETS = ['npy'] as const;

export const EXPORT_NPY_HELP = `Target npy: cellwright export --codebook CODEBOOK.json --target npy --out DIR [--images DIR] [--coded FILE] [--json]

Writes a codebook, and images coded with it, as NumPy .npy files (NEP 1, format
version 1.0, little-endian, C order), loadable with numpy.load:
  DIR/codewords.npy            the codewords, float32, K × dimension (a block's pixels row by row, channels interleaved)
  DIR/<image>.indices.npy      with --images: each image's index map, blocksY × blocksX in raster order of blocks,
                               uint16 (uint32 beyond 65,536 codewords); codewords[indices] gives every block's codeword
  DIR/<image>.means.npy        and, for a mean-removed codebook, the quantised block mean codes, uint8, blocksY × blocksX
  --images DIR   code every image in DIR with the codebook (the same encoder as "cellwright encode") and write its maps
  --coded FILE   write the maps of a coded file (from "cellwright encode") instead of coding an image again
  --threads N    worker threads
  --json         print what was written as JSON
FORMAT.md (server/engine/format) shows how to load these, a codebook JSON and a coded file with plain NumPy.
`;

const SPEC: OptionSpec = {
  codebook: { type: 'string' },
  target: { type: 'string' },
  out: { type: 'string' },
  images: { type: 'string' },
  coded: { type: 'string' },
  threads: { type: 'string' },
  json: { type: 'boolean' },
};

const stem = (path: string) => basename(path, extname(path));

function mapsOf(book: Codebook, dir: string, name: string, encoded: EncodedImage): { path: string; data: Uint8Array }[] {
  const out = [{ path: join(dir, `${name}.indices.npy`), data: indexMapNpy(encoded, book.size) }];
  const means = meanCodesNpy(encoded);
  if (means) out.push({ path: join(dir, `${name}.means.npy`), data: means });
  return out;
}

export async function runExportNpy(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('export', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(EXPORT_NPY_HELP);
    return;
  }
  const codebookPath = requiredString(values, 'codebook', 'export');
  if (choiceOption(values, 'target', TARGETS) === undefined) throw new CliUsageError(`"cellwright export" needs --target (${TARGETS.join(', ')})`);
  const dir = requiredString(values, 'out', 'export');
  const imagesDir = stringOption(values, 'images');
  const codedPath = stringOption(values, 'coded');
  const threads = intOption(values, 'threads', { min: 1, max: 1024 });
  const info = await stat(dir).catch(() => null);
  if (!info?.isDirectory()) throw new CliInputError(`--out ${dir} is not a folder; create it first`);
  const book = await loadCodebook(codebookPath);
  if ((imagesDir || codedPath) && !book.patch) throw new CliInputError(`codebook ${codebookPath} was trained on raw vectors and has no patch geometry, so it codes no images`);

  const outputs: { path: string; data: Uint8Array }[] = [{ path: join(dir, 'codewords.npy'), data: writeNpy(book.codewords, book.size, book.dimension) }];
  if (codedPath) outputs.push(...mapsOf(book, dir, stem(codedPath), readContainer(book, await readInput(codedPath, 'coded file'))));
  if (imagesDir) {
    const loading = progressBar(ctx, 'coding images');
    try {
      const images = await loadImageFolder(imagesDir, book.patch!.color, 'image folder');
      for (const [i, image] of images.entries()) {
        outputs.push(...mapsOf(book, dir, stem(image.name), await encodeImage(book, image, { threads, signal: ctx.signal })));
        loading.update((i + 1) / images.length, basename(image.name));
      }
    } finally {
      loading.done();
    }
  }
  const names = outputs.map((o) => o.path);
  if (new Set(names).size !== names.length) throw new CliInputError('two inputs have the same file name stem; their .npy files would overwrite each other');
  await writeOutputsAtomically(outputs);
  if (values.json) {
    ctx.stdout.write(jsonLine({ command: 'export', target: 'npy', files: names }));
    return;
  }
  ctx.stdout.write(names.map((n) => `wrote ${n}\n`).join(''));
}
