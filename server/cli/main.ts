import { fileURLToPath } from 'node:url';
import { shutdownEngineWorkers } from '../engine';
import { CliUsageError, oneLine } from './cli-error';
import { processContext, type CliContext } from './context';
import { ANOMALY_HELP, runAnomaly } from './commands/anomaly';
import { BD_HELP, runBd } from './commands/bd';
import { CHANNEL_HELP, runChannel } from './commands/channel';
import { DECODE_HELP, runDecode } from './commands/decode';
import { DENOISE_HELP, runDenoise } from './commands/denoise';
import { ENCODE_HELP, runEncode } from './commands/encode';
import { EVAL_HELP, runEval } from './commands/eval';
import { EXPORT_HELP, runExport } from './commands/export';
import { REORDER_HELP, runReorder } from './commands/reorder';
import { runSweep, SWEEP_HELP } from './commands/sweep';
import { runTrain, TRAIN_HELP } from './commands/train';

const COMMANDS: Record<string, { run: (argv: string[], ctx: CliContext) => Promise<void>; help: string; summary: string }> = {
  train: { run: runTrain, help: TRAIN_HELP, summary: 'train a codebook on images or .npy vectors' },
  eval: { run: runEval, help: EVAL_HELP, summary: 'measure rate and distortion of a codebook on held-out images or vectors' },
  encode: { run: runEncode, help: ENCODE_HELP, summary: 'code an image with a codebook' },
  decode: { run: runDecode, help: DECODE_HELP, summary: 'decode a coded file to PNG' },
  export: { run: runExport, help: EXPORT_HELP, summary: 'write a codebook for use elsewhere (--target c: fixed-point table and C99 decoder; --target npy: NumPy files)' },
  sweep: { run: runSweep, help: SWEEP_HELP, summary: 'the studio\'s run over a range of b: train, evaluate on held-out images, rate–distortion CSV' },
  anomaly: { run: runAnomaly, help: ANOMALY_HELP, summary: 'flag the blocks of held-out images that the codebook\'s training patches rarely reach' },
  denoise: { run: runDenoise, help: DENOISE_HELP, summary: 'remove Gaussian noise with the codebook as a model of its training patches' },
  bd: { run: runBd, help: BD_HELP, summary: 'BD-rate and BD-PSNR of a curve file\'s codebooks against JPEG, WebP and AVIF' },
  channel: { run: runChannel, help: CHANNEL_HELP, summary: 'PSNR against bit-error rate on a binary symmetric channel, measured and expected' },
  reorder: { run: runReorder, help: REORDER_HELP, summary: 'reorder a codebook\'s indices for a noisy channel (a new codebook)' },
};

export const MAIN_HELP = `Usage: cellwright <command> [options]

Design vector-quantisation image codecs: train codebooks, measure them, code images.

Commands:
${Object.entries(COMMANDS).map(([name, c]) => `  ${name.padEnd(8)} ${c.summary}`).join('\n')}

Run "cellwright <command> --help" for a command's options.
`;

/**
 * Runs one command and returns the exit status: 0 done, 1 bad input or failure, 2 bad usage, 130 interrupted.
 * Errors are reported as exactly one line on stderr, "cellwright: error: …".
 */
export async function main(argv: string[], ctx: CliContext = processContext()): Promise<number> {
  try {
    const [name, ...rest] = argv;
    if (name === '--help' || name === '-h' || name === 'help') {
      ctx.stdout.write(rest[0] && COMMANDS[rest[0]] ? COMMANDS[rest[0]].help : MAIN_HELP);
      return 0;
    }
    if (name === undefined) throw new CliUsageError(`missing command (${Object.keys(COMMANDS).join(', ')}); see cellwright --help`);
    const command = COMMANDS[name];
    if (!command) throw new CliUsageError(`unknown command "${name}" (${Object.keys(COMMANDS).join(', ')}); see cellwright --help`);
    await command.run(rest, ctx);
    return 0;
  } catch (error) {
    const aborted = ctx.signal?.aborted || (error instanceof Error && error.name === 'AbortError');
    ctx.stderr.write(`cellwright: error: ${aborted ? 'interrupted' : oneLine(error)}\n`);
    if (aborted) return 130;
    return error instanceof CliUsageError ? 2 : 1;
  } finally {
    await shutdownEngineWorkers();
  }
}

/** Process entry: Ctrl-C cancels the running work (no output file is left behind), a second Ctrl-C exits at once. */
export async function runAsProcess(argv = process.argv.slice(2)): Promise<void> {
  const controller = new AbortController();
  const onSigint = () => {
    if (controller.signal.aborted) process.exit(130);
    controller.abort();
  };
  process.on('SIGINT', onSigint);
  const status = await main(argv, processContext(controller.signal));
  process.off('SIGINT', onSigint);
  process.exitCode = status;
}

// `node --import tsx server/cli/main.ts …` runs it directly; scripts/cellwright.mjs imports runAsProcess instead.
if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) void runAsProcess();
