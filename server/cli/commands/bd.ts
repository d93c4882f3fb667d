import {
  BD_METHOD_LABELS, BD_METHODS, BD_MIN_OVERLAP_FRACTION, BD_TABLE_CSV_COLUMNS, bdAgainstCodecs, bdTableCsv, CURVE_CSV_COLUMNS, DEFAULT_BD_METHOD, readCurveCsv,
  type BdTableRow, type CurveRate,
} from '../../engine';
import { choiceOption, parseOptions, requiredString, stringOption, type OptionSpec } from '../args';
import type { CliContext } from '../context';
import { checkOutputFolder, readInput, writeOutputsAtomically } from '../files';
import { jsonLine, table } from '../text-output';

const RATES: readonly CurveRate[] = ['actual', 'fixed', 'entropy'];

export const BD_HELP = `Usage: cellwright bd --curve CURVE.csv [--method ${BD_METHODS.join('|')}] [--rate ${RATES.join('|')}] [--out TABLE.csv] [--json]

Bjøntegaard deltas of the codebooks in a curve file (written by "cellwright sweep --baseline …" or downloaded from a
run's page) against each standard codec in it (JPEG, WebP, AVIF): BD-rate, the mean rate change at equal PSNR in
percent (negative: fewer bits), and BD-PSNR, the mean PSNR change at equal rate in dB (G. Bjøntegaard, ITU-T
VCEG-M33, 2001). Each figure is averaged only over the interval both curves cover (rate for BD-PSNR, PSNR for
BD-rate), which the output names; nothing is extrapolated. A figure whose shared interval is under
${Math.round(BD_MIN_OVERLAP_FRACTION * 100)} % of the shorter curve's range is flagged "short overlap".
  --method M   how each curve is drawn through its points (default ${DEFAULT_BD_METHOD}):
${BD_METHODS.map((m) => `                 ${m.padEnd(6)} ${BD_METHOD_LABELS[m]}`).join('\n')}
  --rate R     the codebooks' rate column: actual (coded file bytes, default), fixed or entropy; a codec's rate is
               always its file's bytes
  --out FILE   also write the table as CSV: ${BD_TABLE_CSV_COLUMNS.join(', ')}
  --json       print the rows as one JSON object instead of a table
The curve file needs the columns ${CURVE_CSV_COLUMNS.join(', ')}.
`;

const SPEC: OptionSpec = {
  curve: { type: 'string' },
  method: { type: 'string' },
  rate: { type: 'string' },
  out: { type: 'string' },
  json: { type: 'boolean' },
};

/** A figure with its sign, or a dash when it could not be computed; `sweep` prints its figures the same way. */
export const signedFigure = (v: number | null, digits: number, unit: string) => (v === null ? '—' : `${v > 0 ? '+' : ''}${v.toFixed(digits)} ${unit}`);
const span = (s: readonly [number, number] | null, digits: number, unit: string) => (s ? `${s[0].toFixed(digits)}–${s[1].toFixed(digits)} ${unit}` : '—');

/** Why a figure is missing, or its short-overlap flag; `sweep` uses the same words. */
export function bdNote(r: BdTableRow): string {
  if (r.reason) return r.reason;
  return r.shortOverlap ? `short overlap (${Math.round(r.sharedFraction.bpp * 100)} % of rate, ${Math.round(r.sharedFraction.psnr * 100)} % of PSNR range)` : '';
}

export async function runBd(argv: string[], ctx: CliContext): Promise<void> {
  const values = parseOptions('bd', argv, SPEC);
  if (values.help) {
    ctx.stdout.write(BD_HELP);
    return;
  }
  const curvePath = requiredString(values, 'curve', 'bd');
  const method = choiceOption(values, 'method', BD_METHODS) ?? DEFAULT_BD_METHOD;
  const rate = choiceOption(values, 'rate', RATES) ?? 'actual';
  const out = stringOption(values, 'out');
  if (out !== undefined) await checkOutputFolder(out);
  const points = readCurveCsv((await readInput(curvePath, 'curve file')).toString('utf8'), curvePath);
  const rows = bdAgainstCodecs(points, rate, method);
  if (out !== undefined) await writeOutputsAtomically([{ path: out, data: bdTableCsv(rows) }]);
  if (values.json) {
    ctx.stdout.write(jsonLine({ command: 'bd', method, rate, minOverlapFraction: BD_MIN_OVERLAP_FRACTION, rows }));
    return;
  }
  if (rows.length === 0) {
    ctx.stdout.write(`${curvePath} holds no codec points to compare with; run "cellwright sweep" with --baseline\n`);
    return;
  }
  ctx.stdout.write(
    table(
      ['against', 'BD-rate', 'BD-PSNR', 'shared rate', 'shared PSNR', 'note'],
      rows.map((r) => [r.reference, signedFigure(r.bdRate, 2, '%'), signedFigure(r.bdPsnr, 3, 'dB'), span(r.shared.bpp, 4, 'bpp'), span(r.shared.psnr, 2, 'dB'), bdNote(r)]),
    ) + `curves drawn by ${BD_METHOD_LABELS[method]}; codebooks on the ${rate} rate${out ? `; wrote ${out}` : ''}\n`,
  );
}
