import { encodeToContainer, encodeErrorMapPng, prestartEngineWorkers, reconstruct, threadBudget, encodePng, ERROR_MAP_GAIN, MAX_RESYNC_ROWS, PAYLOAD_CHOICES, psnrForJson, psnrFromMse, meanSquaredError, readContainerHeader } from '../../engine';
import { choiceOption, intOption, parseOptions, requiredString, stringOption, type OptionSpec } from '../args';
import { CliUsageError } from '../cli-error';
import { CliInputError } from '../cli-error';
import type { CliContext } from '../context';
import { checkOutputFolder, writeOutputsAtomically } from '../files';
import { loadCodebook, loadImageFileForCoding } from '../inputs';
import { fmt, jsonLine } from '../text-output';

export const ENCODE_HELP = `Usage: cellwright encode --codebook CODEBOOK.json --image IN --out FILE [--payload raw|packed|auto] [--resync N]
                        [--recon OUT.png] [--error-map OUT.png] [--metrics] [--json]

Codes one image with a codebook into a compact coded file (format: server/engine/format/FORMAT.md).
  --payload auto        how the fixed-rate payload (packed indices and mean codes) is stored:
                          raw     as it is, exactly the fixed rate; what a table-lookup decoder (the C export) reads
                          packed  further packed by deflate or brotli, whichever is smaller (even if larger than raw)
                          auto    the smallest of the three (the default)
  --resync N            a resynchronisation marker (4 bytes, FF 52 and the segment number) before every N block rows
                        but the first, 1..${MAX_RESYNC_ROWS}; needs --payload raw
  --recon OUT.png       also write the decoded image (exactly what "cellwright decode" will produce)
  --error-map OUT.png   also write |original − decoded| × ${ERROR_MAP_GAIN} as a grey image (largest channel error per pixel;
                        white = an error of 64 levels or more)
  --metrics             also decode the file and report its MSE and PSNR (text and --json); without it encode
                        writes the file and reports its size only
  --threads N           threads for the search (this process's own thread counts as one)
`;

const SPEC: OptionSpec = {
  codebook: { type: 'string' },
  image: { type: 'string' },
  out: { type: 'string' },
  recon: { type: 'string' },
  'error-map': { type: 'string' },
  payload: { type: 'string' },
  resync: { type: 'string' },
  threads: { type: 'string' },
  json: { type: 'boolean' },
  metrics: { type: 'boolean' },
};

export async function runEncode(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('encode', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(ENCODE_HELP);
    return;
  }
  const codebookPath = requiredString(values, 'codebook', 'encode');
  const imagePath = requiredString(values, 'image', 'encode');
  const out = requiredString(values, 'out', 'encode');
  const reconPath = stringOption(values, 'recon');
  const errorMapPath = stringOption(values, 'error-map');
  const threads = intOption(values, 'threads', { min: 1, max: 1024 });
  const payload = choiceOption(values, 'payload', PAYLOAD_CHOICES) ?? 'auto';
  const resyncRows = intOption(values, 'resync', { min: 1, max: MAX_RESYNC_ROWS }) ?? 0;
  if (resyncRows > 0 && payload !== 'raw') throw new CliUsageError('--resync needs --payload raw (a compressed payload hides the markers)');
  for (const p of [out, reconPath, errorMapPath]) if (p) await checkOutputFolder(p);
  // The search's other threads load their code while the codebook and the image are read (this thread is one of them).
  prestartEngineWorkers(Math.min(threads ?? threadBudget.total, threadBudget.total) - 1);
  const book = await loadCodebook(codebookPath);
  if (!book.patch) throw new CliInputError(`codebook ${codebookPath} was trained on raw vectors and has no patch geometry, so it cannot code images`);
  const image = await loadImageFileForCoding(imagePath, book.patch.color);
  // This process has nothing else to do meanwhile, so its own thread searches too.
  const { container, encoded } = await encodeToContainer(book, image, { threads, signal: ctx.signal, payload, resyncRows, callerThread: true });
  const metrics = values.metrics === true;
  const reconstruction = reconPath || errorMapPath || metrics ? reconstruct(book, encoded) : null;
  const outputs: { path: string; data: Uint8Array }[] = [{ path: out, data: container }];
  if (reconPath) outputs.push({ path: reconPath, data: await encodePng(reconstruction!, image.width, image.height, image.channels) });
  if (errorMapPath) outputs.push({ path: errorMapPath, data: await encodeErrorMapPng(image.pixels, reconstruction!, image.width, image.height, image.channels) });
  await writeOutputsAtomically(outputs);
  const pixels = image.width * image.height;
  const mse = reconstruction && metrics ? meanSquaredError(image.pixels, reconstruction) : null;
  const bpp = (container.length * 8) / pixels;
  const { coding } = readContainerHeader(container);
  if (values.json) {
    const measured = mse === null ? {} : { mse, psnr: psnrForJson(psnrFromMse(mse)) };
    ctx.stdout.write(jsonLine({ command: 'encode', out, width: image.width, height: image.height, bytes: container.length, coding, resyncRows, bppActual: bpp, ...measured }));
    return;
  }
  const stored = `${container.length} bytes, ${coding}${resyncRows > 0 ? `, a marker every ${resyncRows} block rows` : ''}`;
  const measured = mse === null ? '' : `, MSE ${fmt.mse(mse)}, PSNR ${fmt.psnr(psnrFromMse(mse))}`;
  ctx.stdout.write(`${imagePath}: ${image.width}×${image.height} → ${stored} (${fmt.bpp(bpp)} bpp)${measured}\nwrote ${outputs.map((o) => o.path).join(', ')}\n`);
}
