import { mkdir, stat } from 'node:fs/promises';
import { basename, join } from 'node:path';
import { firmwareBundle, fixedPointCost, psnrForJson, RESIDUAL_WIDTHS, type FirmwareBundle, type RoundingCost } from '../../engine';
import { choiceOption, intOption, parseOptions, requiredString, stringOption, type OptionSpec } from '../args';
import { CliInputError } from '../cli-error';
import type { CliContext } from '../context';
import { writeOutputsAtomically } from '../files';
import { loadCodebook, loadImageFolder } from '../inputs';
import { progressBar } from '../progress';
import { fmt, jsonLine, table } from '../text-output';

/** Export targets; `c` is the firmware bundle (server/engine/firmware). */
const EXPORT_TARGETS = ['c'] as const;

export const EXPORT_C_HELP = `Target c: cellwright export --codebook CODEBOOK.json --target c --out DIR [--images DIR] [--residual int16|int8] [--json]
  --target c        a firmware bundle in DIR (made when missing; files of the same name are replaced):
                    cw_codebook.h (the codewords in fixed point), cw_decode.h and cw_decode.c (a reference decoder in
                    portable C99: no heap, no floating point, raw payloads only), decode_file.c (decode_file IN OUT
                    writes a PGM or PPM) and README.md (build: gcc -std=c99 -O2 -o decode_file *.c; the Q format; the API).
                    Every structure: full search, entropy-constrained (the Huffman code tables), tree (leaves and
                    children) and residual stages. Plain codebooks are stored as uint8 and decode byte for byte as the
                    studio decodes; mean-removed residuals and residual stages as signed Q format (--residual, default
                    int16), with the largest fraction that fits.
  --images DIR      measure the PSNR cost of the fixed-point rounding on these (held-out) images: each is coded once
                    and decoded with the float and with the fixed-point codewords
  --threads N       worker threads for --images
Files are coded for the C decoder with "cellwright encode --payload raw".
`;

const SPEC: OptionSpec = {
  codebook: { type: 'string' },
  target: { type: 'string' },
  out: { type: 'string' },
  images: { type: 'string' },
  residual: { type: 'string' },
  threads: { type: 'string' },
  json: { type: 'boolean' },
};

/** The bundle's folder: made when missing (its parent must exist), refused when it is a file. */
async function prepareFolder(dir: string): Promise<void> {
  try {
    if (!(await stat(dir)).isDirectory()) throw new CliInputError(`cannot write the bundle to ${dir}: it is not a folder`);
    return;
  } catch (error) {
    if (error instanceof CliInputError) throw error;
  }
  try {
    await mkdir(dir);
  } catch (error) {
    throw new CliInputError(`cannot make folder ${dir}: ${(error as NodeJS.ErrnoException).code ?? String(error)}`);
  }
}

function costJson(cost: RoundingCost | null) {
  if (!cost) return null;
  const image = (c: { psnrFloat: number; psnrFixed: number; costDb: number; differing: number }) => ({
    psnrFloat: psnrForJson(c.psnrFloat), psnrFixed: psnrForJson(c.psnrFixed), costDb: c.costDb, differing: c.differing,
  });
  return { ...image(cost), images: cost.images.map((c) => ({ name: c.name, ...image(c) })) };
}

function costText(bundle: FirmwareBundle, cost: RoundingCost | null): string {
  const t = bundle.table;
  const format = t.type === 'uint8' ? 'uint8 (the decoder\'s own rounding: byte for byte the studio\'s output)' : `${t.type} Q${(t.type === 'int8' ? 7 : 15) - t.fractionBits}.${t.fractionBits}`;
  const saturated = t.saturated > 0 ? `, ${t.saturated} components saturated` : '';
  let text = `table: ${format}${saturated}\n`;
  if (!cost) return `${text}rounding cost: not measured (give --images)\n`;
  const rows = cost.images.map((c) => [basename(c.name), fmt.psnr(c.psnrFloat), fmt.psnr(c.psnrFixed), c.costDb.toFixed(4), c.differing]);
  rows.push(['all', fmt.psnr(cost.psnrFloat), fmt.psnr(cost.psnrFixed), cost.costDb.toFixed(4), cost.differing]);
  text += `rounding cost on ${cost.images.length} images (dB lost to the fixed-point table; components that decode differently):\n`;
  return text + table(['image', 'PSNR float', 'PSNR fixed', 'cost dB', 'differing'], rows);
}

export async function runExportC(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('export', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(EXPORT_C_HELP);
    return;
  }
  const codebookPath = requiredString(values, 'codebook', 'export');
  const target = choiceOption(values, 'target', EXPORT_TARGETS) ?? requiredString(values, 'target', 'export');
  const out = requiredString(values, 'out', 'export');
  const imagesDir = stringOption(values, 'images');
  const residual = choiceOption(values, 'residual', RESIDUAL_WIDTHS) ?? 'int16';
  const threads = intOption(values, 'threads', { min: 1, max: 1024 });
  const book = await loadCodebook(codebookPath);
  if (!book.patch) throw new CliInputError(`codebook ${codebookPath} was trained on raw vectors and has no patch geometry, so no image decoder can be built for it`);
  const bundle = firmwareBundle(book, { residual });
  let cost: RoundingCost | null = null;
  if (imagesDir !== undefined) {
    const loading = progressBar(ctx, 'reading images');
    const images = await loadImageFolder(imagesDir, book.patch.color, 'image folder', loading);
    loading.done();
    cost = await fixedPointCost(book, bundle.table, images, { threads, signal: ctx.signal });
  }
  await prepareFolder(out);
  const files = bundle.files.map((f) => ({ path: join(out, f.name), data: f.text }));
  await writeOutputsAtomically(files);
  if (values.json) {
    const t = bundle.table;
    const tableJson = { type: t.type, fractionBits: t.fractionBits, saturated: t.saturated };
    ctx.stdout.write(jsonLine({ command: 'export', target, out, files: bundle.files.map((f) => f.name), table: tableJson, roundingCost: costJson(cost) }));
    return;
  }
  ctx.stdout.write(`${costText(bundle, cost)}wrote ${files.map((f) => f.path).join(', ')}\n`);
}
