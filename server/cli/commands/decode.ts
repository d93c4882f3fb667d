import { decode, encodePng, EngineInputError } from '../../engine';
import { CliInputError } from '../cli-error';
import { parseOptions, requiredString, type OptionSpec } from '../args';
import type { CliContext } from '../context';
import { checkOutputFolder, readInput, writeOutputsAtomically } from '../files';
import { loadCodebook } from '../inputs';
import { jsonLine } from '../text-output';

export const DECODE_HELP = `Usage: cellwright decode --codebook CODEBOOK.json --in FILE --out OUT.png [--json]

Decodes a coded file back to a PNG (grey for luma codebooks, RGB for rgb). The file must have been coded with this
codebook: its checksum is stored in the file and checked.
`;

const SPEC: OptionSpec = { codebook: { type: 'string' }, in: { type: 'string' }, out: { type: 'string' }, json: { type: 'boolean' } };

export async function runDecode(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('decode', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(DECODE_HELP);
    return;
  }
  const codebookPath = requiredString(values, 'codebook', 'decode');
  const input = requiredString(values, 'in', 'decode');
  const out = requiredString(values, 'out', 'decode');
  await checkOutputFolder(out);
  const book = await loadCodebook(codebookPath);
  const bytes = await readInput(input, 'coded file');
  let image: ReturnType<typeof decode>;
  try {
    image = decode(book, bytes);
  } catch (error) {
    // Container errors do not know the file name; add it so the one error line says which file is at fault.
    if (error instanceof EngineInputError) throw new CliInputError(`${input}: ${error.message}`);
    throw error;
  }
  await writeOutputsAtomically([{ path: out, data: await encodePng(image.pixels, image.width, image.height, image.channels) }]);
  if (values.json) {
    ctx.stdout.write(jsonLine({ command: 'decode', out, width: image.width, height: image.height, channels: image.channels }));
    return;
  }
  ctx.stdout.write(`${input}: ${image.width}×${image.height} ${image.channels === 3 ? 'rgb' : 'luma'}\nwrote ${out}\n`);
}
