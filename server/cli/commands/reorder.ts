import { BER, DEFAULT_REORDER_BER, REORDER_MAX_BITS, reorderCodebook, serializeCodebook } from '../../engine';
import { numberOption, parseOptions, requiredString, type OptionSpec } from '../args';
import type { CliContext } from '../context';
import { checkOutputFolder, writeOutputsAtomically } from '../files';
import { loadCodebook } from '../inputs';
import { jsonLine } from '../text-output';

export const REORDER_HELP = `Usage: cellwright reorder --codebook IN.json --out OUT.json [--ber P] [--json]

Index assignment for a noisy channel: writes a new codebook with the same codewords (and usage) in the order that
lowers the expected channel distortion Σ_i p_i Σ_j P(j|i) ‖y_i − y_j‖² at bit-error rate P, by the binary switching
algorithm (pseudo-Gray coding). Noiseless results do not change; files coded with IN need IN to decode.
  --ber P    the design bit-error rate, ${BER.min} to ${BER.max} (default ${DEFAULT_REORDER_BER})
Codebooks up to ${REORDER_MAX_BITS} index bits (${2 ** REORDER_MAX_BITS} codewords).
`;

const SPEC: OptionSpec = { codebook: { type: 'string' }, out: { type: 'string' }, ber: { type: 'string' }, json: { type: 'boolean' } };

export async function runReorder(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('reorder', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(REORDER_HELP);
    return;
  }
  const inPath = requiredString(values, 'codebook', 'reorder');
  const out = requiredString(values, 'out', 'reorder');
  const ber = numberOption(values, 'ber', BER) ?? DEFAULT_REORDER_BER;
  await checkOutputFolder(out);
  const book = await loadCodebook(inPath);
  const result = reorderCodebook(book, { ber });
  await writeOutputsAtomically([{ path: out, data: serializeCodebook(result.codebook) }]);
  const gain = result.before > 0 ? 10 * Math.log10(result.before / result.after) : 0;
  if (values.json) {
    ctx.stdout.write(jsonLine({ command: 'reorder', out, ber, channelDistortionBefore: result.before, channelDistortionAfter: result.after, swaps: result.swaps, checksum: result.codebook.checksum }));
    return;
  }
  ctx.stdout.write(
    `expected channel distortion at BER ${ber}: ${result.before.toPrecision(5)} → ${result.after.toPrecision(5)} per component (${gain.toFixed(2)} dB lower, ${result.swaps} switches)\nwrote ${out}\n`,
  );
}
