import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../../server/cli/context';
import { main } from '../../../server/cli/main';
import { BD_METHODS, BD_TABLE_CSV_COLUMNS, curveCsv, readCsv, readCurveCsv, type CurveCsvPoint } from '../../../server/engine';

let dir: string;

async function cli(...argv: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  const status = await main(argv, ctx);
  return { status, stdout, stderr };
}

// Invented codec curve; the codebooks sit at 0.8 × JPEG's rate at the same PSNRs and 0.5 dB above WebP at its rates.
const jpeg = [
  [0.2, 27.1], [0.35, 29.4], [0.6, 31.8], [1.0, 34.2], [1.7, 37.0],
];
const webp = [
  [0.15, 27.5], [0.3, 30.2], [0.55, 32.9], [0.9, 35.1], [1.5, 37.8],
];
const codecPoint = (codec: string, [bpp, psnr]: number[], i: number): CurveCsvPoint => ({
  codec, codebook: null, bits: null, codebookSize: null, quality: 10 * (i + 1), bppFixed: null, bppEntropy: null, bppActual: bpp, mse: 1, psnr, ssim: null,
});
const vq = (bpp: number, psnr: number, bits: number): CurveCsvPoint => ({
  codec: 'vq', codebook: null, bits, codebookSize: 2 ** bits, quality: null, bppFixed: bpp / 2, bppEntropy: bpp / 3, bppActual: bpp, mse: 1, psnr, ssim: null,
});

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'cw-bd-'));
  const shiftedFromJpeg = jpeg.map(([bpp, psnr], i) => vq(bpp * 0.8, psnr, i + 1));
  writeFileSync(join(dir, 'rate.csv'), curveCsv([...shiftedFromJpeg, ...jpeg.map((x, i) => codecPoint('jpeg', x, i))]));
  const aboveWebp = webp.map(([bpp, psnr], i) => vq(bpp, psnr + 0.5, i + 1));
  // An exact reconstruction (psnr inf) at the top is left out of the fit, as in the studio.
  writeFileSync(join(dir, 'psnr.csv'), curveCsv([...aboveWebp, { ...vq(4, Infinity, 9), mse: 0 }, ...webp.map((x, i) => codecPoint('webp', x, i))]));
});

afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('cellwright bd', () => {
  it.each(BD_METHODS)('gives −20 %% against a codec whose rates are 1.25 × the codebooks\u2019 (%s)', async (method) => {
    const r = await cli('bd', '--curve', join(dir, 'rate.csv'), '--method', method, '--json');
    expect(r.status).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.method).toBe(method);
    expect(out.rows).toHaveLength(1);
    expect(out.rows[0].reference).toBe('JPEG');
    expect(out.rows[0].bdRate).toBeCloseTo(-20, 9);
    // Codebooks cover 0.16–1.36 bpp, JPEG 0.2–1.7 bpp: the figure is averaged over 0.2–1.36 only.
    expect(out.rows[0].shared.bpp[0]).toBeCloseTo(0.2, 12);
    expect(out.rows[0].shared.bpp[1]).toBeCloseTo(1.7 * 0.8, 12);
  });

  it.each(BD_METHODS)('gives the 0.5 dB offset as BD-PSNR and leaves the exact point out (%s)', async (method) => {
    const out = JSON.parse((await cli('bd', '--curve', join(dir, 'psnr.csv'), '--method', method, '--json')).stdout);
    expect(out.rows[0].reference).toBe('WebP');
    expect(out.rows[0].bdPsnr).toBeCloseTo(0.5, 9);
    expect(out.rows[0].shortOverlap).toBe(false);
  });

  it('uses the chosen rate column for the codebooks and writes the table as CSV', async () => {
    // On the fixed rate (half the actual one) the codebooks need 0.4 × JPEG's bits: −60 %.
    const table = join(dir, 'table.csv');
    const r = await cli('bd', '--curve', join(dir, 'rate.csv'), '--rate', 'fixed', '--method', 'cubic', '--out', table);
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/JPEG\s+-60\.00 %/);
    expect(r.stdout).toMatch(/VCEG-M33/);
    const [header, row] = readCsv(readFileSync(table, 'utf8'));
    expect(header).toEqual([...BD_TABLE_CSV_COLUMNS]);
    expect(row[header.indexOf('rate')]).toBe('fixed');
    expect(Number(row[header.indexOf('bd_rate_percent')])).toBeCloseTo(-60, 9);
    expect(row[header.indexOf('short_overlap')]).toBe('false');
  });

  it('refuses an unknown method with a usage error', async () => {
    const r = await cli('bd', '--curve', join(dir, 'rate.csv'), '--method', 'spline');
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/--method must be one of pchip, cubic/);
  });

  it('refuses a file that is not a curve file', async () => {
    writeFileSync(join(dir, 'other.csv'), 'a,b\r\n1,2\r\n');
    const r = await cli('bd', '--curve', join(dir, 'other.csv'));
    expect(r.status).toBe(1);
    expect(r.stderr).toMatch(/not a curve file/);
  });

  it('names both fitting methods in its help', async () => {
    const r = await cli('bd', '--help');
    expect(r.stdout).toMatch(/VCEG-M33/);
    expect(r.stdout).toMatch(/Fritsch–Carlson 1980/);
  });
});

describe('reading a curve file back', () => {
  it('reads what curveCsv writes, inf as +∞ and empty fields as null', () => {
    const points = [vq(0.5, Infinity, 3), codecPoint('jpeg', [0.3, 30], 0)];
    points[0].mse = 0;
    expect(readCurveCsv(curveCsv(points))).toEqual(points);
  });
});
