import { CliUsageError } from '../cli-error';
import type { CliContext } from '../context';
import { EXPORT_C_HELP, runExportC } from './export-c';
import { EXPORT_NPY_HELP, runExportNpy } from './export-npy';

/** Export targets, each its own command module: c (firmware bundle) and npy (NumPy files). */
const TARGETS = { c: runExportC, npy: runExportNpy } as const;

export const EXPORT_HELP = `Usage: cellwright export --codebook CODEBOOK.json --target c|npy --out DIR [options]

Writes a codebook for use outside the studio.

${EXPORT_C_HELP}
${EXPORT_NPY_HELP}`;

/** The value of --target in argv (either "--target X" or "--target=X"), if any. */
function targetOf(argv: string[]): string | undefined {
  for (let i = 0; i < argv.length; i++) {
    if (argv[i] === '--target') return argv[i + 1];
    if (argv[i].startsWith('--target=')) return argv[i].slice('--target='.length);
  }
  return undefined;
}

export async function runExport(argv: string[], ctx: CliContext): Promise<void> {
  const target = targetOf(argv);
  if (argv.includes('--help') || argv.includes('-h')) {
    ctx.stdout.write(EXPORT_HELP);
    return;
  }
  if (target === undefined) throw new CliUsageError('"cellwright export" needs --target');
  const run = (TARGETS as Record<string, (argv: string[], ctx: CliContext) => Promise<void>>)[target];
  // The same words as every other choice option (args.ts choiceOption).
  if (!run) throw new CliUsageError(`--target must be one of ${Object.keys(TARGETS).join(', ')}, got "${target}"`);
  await run(argv, ctx);
}
