import {
  BER, CHANNEL_SEEDS, channelCurve, DEFAULT_BERS, MAX_BERS, MAX_RESYNC_ROWS, psnrForJson, SEED, type ChannelCurve,
} from '../../engine';
import { intOption, parseOptions, requiredString, stringOption, type OptionSpec } from '../args';
import { CliInputError, CliUsageError } from '../cli-error';
import type { CliContext } from '../context';
import { loadCodebook, loadImageFolder } from '../inputs';
import { progressBar } from '../progress';
import { fmt, jsonLine, table } from '../text-output';

export const CHANNEL_HELP = `Usage: cellwright channel --codebook CODEBOOK.json --images DIR [--ber LIST] [--seeds N] [--seed S] [--resync N] [--json]

PSNR against bit-error rate: each (held-out) image is coded with the raw payload, the payload sent through a binary
symmetric channel (each bit flipped with probability p, the header kept intact) and decoded; an index that names no
codeword is read with its top bit cleared. Beside the measured PSNR, the expected one from the closed form
D = Σ_i p_i Σ_j P(j|i) E‖x − c_j‖², P(j|i) = p^h (1 − p)^(b − h) (plain codebooks up to 12 index bits).
  --ber LIST     comma-separated bit-error rates from ${BER.min} to ${BER.max}, at most ${MAX_BERS} (default ${DEFAULT_BERS.join(',')})
  --seeds N      simulations per rate, ${CHANNEL_SEEDS.min}..${CHANNEL_SEEDS.max} (default ${CHANNEL_SEEDS.default}); the curve shows their mean MSE
  --seed S       first seed (default 0)
  --resync N     a resynchronisation marker every N block rows (1..${MAX_RESYNC_ROWS}); with fixed-length indices a flipped
                 bit damages one block whatever N is, so the markers only add their 4 bytes each to the payload
  --threads N    worker threads for coding the images
`;

const SPEC: OptionSpec = {
  codebook: { type: 'string' },
  images: { type: 'string' },
  ber: { type: 'string' },
  seeds: { type: 'string' },
  seed: { type: 'string' },
  resync: { type: 'string' },
  threads: { type: 'string' },
  json: { type: 'boolean' },
};

/** "1e-4,1e-3" → [1e-4, 1e-3], each a decimal number in BER's range, at most MAX_BERS of them. */
export function berListOption(text: string | undefined): number[] | undefined {
  if (text === undefined) return undefined;
  const parts = text.split(',');
  if (parts.length > MAX_BERS) throw new CliUsageError(`--ber takes at most ${MAX_BERS} rates, got ${parts.length}`);
  return parts.map((part) => {
    const v = Number(part);
    if (!/^\s*(\d+\.?\d*|\.\d+)(e[+-]?\d+)?\s*$/i.test(part) || !(v >= BER.min && v <= BER.max)) {
      throw new CliUsageError(`--ber must be a comma-separated list of numbers from ${BER.min} to ${BER.max}, got "${part}"`);
    }
    return v;
  });
}

function curveJson(curve: ChannelCurve) {
  return {
    noiselessMse: curve.noiselessMse, noiselessPsnr: psnrForJson(curve.noiselessPsnr), payloadBytes: curve.payloadBytes,
    rawBpp: (curve.payloadBytes * 8) / curve.pixels, resyncRows: curve.resyncRows, seeds: curve.seeds, expectedNote: curve.expectedNote,
    points: curve.points.map((p) => ({
      ber: p.ber, mse: p.mse, psnr: psnrForJson(p.psnr), mseStdError: p.mseStdError, expectedMse: p.expectedMse,
      expectedPsnr: p.expectedPsnr === null ? null : psnrForJson(p.expectedPsnr), flips: p.flips, bits: p.bits,
    })),
  };
}

export async function runChannel(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('channel', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(CHANNEL_HELP);
    return;
  }
  const codebookPath = requiredString(values, 'codebook', 'channel');
  const imagesDir = requiredString(values, 'images', 'channel');
  const bers = berListOption(stringOption(values, 'ber'));
  const seeds = intOption(values, 'seeds', CHANNEL_SEEDS);
  const seed = intOption(values, 'seed', SEED);
  const resyncRows = intOption(values, 'resync', { min: 1, max: MAX_RESYNC_ROWS }) ?? 0;
  const threads = intOption(values, 'threads', { min: 1, max: 1024 });
  const book = await loadCodebook(codebookPath);
  if (!book.patch) throw new CliInputError(`codebook ${codebookPath} was trained on raw vectors and has no patch geometry, so it cannot code images`);
  const loading = progressBar(ctx, 'reading images');
  const images = await loadImageFolder(imagesDir, book.patch.color, 'image folder', loading);
  loading.done();
  const curve = await channelCurve(book, images, { bers, seeds, seed, resyncRows, threads, signal: ctx.signal });
  if (values.json) {
    ctx.stdout.write(jsonLine({ command: 'channel', codebook: codebookPath, images: images.length, ...curveJson(curve) }));
    return;
  }
  const rows = curve.points.map((p) => [p.ber.toExponential(0), fmt.psnr(p.psnr), p.expectedPsnr === null ? 'n/a' : fmt.psnr(p.expectedPsnr), fmt.mse(p.mse), p.mseStdError.toFixed(3), p.flips]);
  const note = curve.expectedNote ? `expected: not shown (${curve.expectedNote})\n` : '';
  ctx.stdout.write(
    `${images.length} images, ${curve.payloadBytes} payload bytes (${fmt.bpp((curve.payloadBytes * 8) / curve.pixels)} bpp raw), noiseless PSNR ${fmt.psnr(curve.noiselessPsnr)}, ${curve.seeds} seeds a rate\n${note}` +
      table(['BER', 'PSNR measured', 'PSNR expected', 'MSE', 'MSE std err', 'bits flipped'], rows),
  );
}
