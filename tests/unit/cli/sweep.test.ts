import { mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../../server/cli/context';
import { main } from '../../../server/cli/main';
import { BD_MIN_OVERLAP_FRACTION, parseCodebookJson, readCurveCsv, shutdownEngineWorkers } from '../../../server/engine';

let dir: string;
const p = (...parts: string[]) => join(dir, ...parts);

async function cli(...argv: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  const status = await main(argv, ctx);
  return { status, stdout, stderr };
}

/** An invented textured test image (sums of sines), written as PNG with sharp. */
async function writeTestPng(path: string, width: number, height: number, phase: number): Promise<void> {
  const buf = Buffer.alloc(width * height * 3);
  for (let y = 0; y < height; y += 1) {
    for (let x = 0; x < width; x += 1) {
      for (let c = 0; c < 3; c += 1) {
        const v = 128 + 80 * Math.sin((x + phase) / (4 + c)) * Math.cos((y - phase) / 6) + 25 * Math.sin(x * y * 0.017 + c);
        buf[(y * width + x) * 3 + c] = Math.max(0, Math.min(255, Math.round(v)));
      }
    }
  }
  await sharp(buf, { raw: { width, height, channels: 3 } }).png().toFile(path);
}

const sweepArgs = (...extra: string[]) => ['sweep', '--images', p('train'), '--held-out', p('held'), '--patch', '4x4', '--bits', '1..3', '--seed', '5', ...extra];

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-sweep-'));
  for (const d of ['train', 'held', 'out', 'kept', 'sizes']) mkdirSync(p(d));
  await writeTestPng(p('train', 'a.png'), 64, 48, 0);
  await writeTestPng(p('train', 'b.png'), 48, 40, 7);
  await writeTestPng(p('held', 'c.png'), 40, 32, 3);
});

afterAll(async () => {
  await shutdownEngineWorkers();
  rmSync(dir, { recursive: true, force: true });
});

describe('cellwright sweep --json and --out-dir', () => {
  let out: ReturnType<typeof JSON.parse>;

  beforeAll(async () => {
    const r = await cli(...sweepArgs('--stride', '2', '--baseline', 'jpeg,webp', '--qualities', '10,40,70,90', '--out-dir', p('kept'), '--out', p('out', 'curve.csv'), '--json'));
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    out = JSON.parse(r.stdout);
  });

  it('prints one JSON object with a point per curve row, in the CSV\u2019s order', () => {
    expect(out.command).toBe('sweep');
    expect(out.outDir).toBe(p('kept'));
    const csv = readCurveCsv(readFileSync(p('out', 'curve.csv'), 'utf8'));
    expect(out.points).toHaveLength(csv.length);
    expect(out.points.map((q: { codec: string }) => q.codec)).toEqual(csv.map((q) => q.codec));
    expect(out.points.map((q: { bppActual: number }) => q.bppActual)).toEqual(csv.map((q) => q.bppActual));
    expect(out.codebooks.map((c: { size: number }) => c.size)).toEqual([2, 4, 8]);
  });

  it('keeps every codebook it trains under a name that gives its configuration, stride included', () => {
    expect(readdirSync(p('kept')).sort()).toEqual(['4x4-luma-s2-b1.json', '4x4-luma-s2-b2.json', '4x4-luma-s2-b3.json']);
    for (const c of out.codebooks as { size: number; file: string; checksum: string }[]) {
      const book = parseCodebookJson(readFileSync(c.file, 'utf8'));
      expect(book.size).toBe(c.size);
      expect(book.checksum).toBe(c.checksum);
      expect(book.training.stride).toBe(2);
      // The point of the curve names the file of the codebook it measured.
      expect(out.points.find((q: { codebookSize: number | null }) => q.codebookSize === c.size).file).toBe(c.file);
    }
  });

  it('keeps the same K = 8 codebook that "train --bits 3" makes with the same seed and stride', async () => {
    const r = await cli('train', '--images', p('train'), '--patch', '4x4', '--stride', '2', '--bits', '3', '--seed', '5', '--out', p('out', 'k8.json'));
    expect(r.status).toBe(0);
    const trained = parseCodebookJson(readFileSync(p('out', 'k8.json'), 'utf8'));
    expect(out.codebooks[2].checksum).toBe(trained.checksum);
  });

  it('gives against JPEG and WebP the very BD rows "cellwright bd" gives for the curve file it wrote', async () => {
    // bd.test.ts checks those rows against hand-computed cases (identical rate shift → −20 %, PSNR offset → 0.5 dB).
    const bd = await cli('bd', '--curve', p('out', 'curve.csv'), '--rate', 'actual', '--json');
    expect(bd.status).toBe(0);
    const expected = JSON.parse(bd.stdout);
    expect(out.bd.rows.map((r: { reference: string }) => r.reference)).toEqual(['JPEG', 'WebP']);
    expect(out.bd).toEqual({ method: expected.method, rate: 'actual', minOverlapFraction: BD_MIN_OVERLAP_FRACTION, rows: expected.rows });
  });
});

describe('cellwright sweep BD figures in text', () => {
  it('prints the BD table with the fitting method named, and --method changes it', async () => {
    const r = await cli(...sweepArgs('--baseline', 'jpeg', '--qualities', '10,50,90', '--method', 'cubic', '--out', p('out', 'c.csv')));
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/^JPEG\s+(?:[+-]\d+\.\d\d %|—)/m);
    expect(r.stdout).toMatch(/VCEG-M33/);
    const json = JSON.parse((await cli(...sweepArgs('--baseline', 'jpeg', '--qualities', '10,50,90', '--method', 'cubic', '--out', p('out', 'c.csv'), '--json'))).stdout);
    expect(json.bd.method).toBe('cubic');
    expect(json.outDir).toBeNull();
    expect(json.codebooks.every((c: { file: string | null }) => c.file === null)).toBe(true);
  });

  it('gives no BD rows without --baseline', async () => {
    const json = JSON.parse((await cli(...sweepArgs('--out', p('out', 'plain.csv'), '--json'))).stdout);
    expect(json.bd.rows).toEqual([]);
  });
});

describe('refusals before any training', () => {
  it('refuses an --out-dir that does not exist, and writes no curve', async () => {
    const r = await cli(...sweepArgs('--out-dir', p('missing'), '--out', p('out', 'never.csv')));
    expect(r.status).toBe(1);
    expect(r.stderr).toMatch(/--out-dir .*missing: no such folder/);
    expect(readdirSync(p('out'))).not.toContain('never.csv');
  });

  it('refuses an unknown --method with a usage error', async () => {
    const r = await cli(...sweepArgs('--method', 'spline', '--out', p('out', 'never.csv')));
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/--method must be one of/);
  });
});

describe('cellwright train --keep-sizes', () => {
  it('keeps every size of the splitting pass, the last one identical to --out', async () => {
    const r = await cli('train', '--images', p('train'), '--patch', '4x4', '--bits', '3', '--seed', '5', '--keep-sizes', p('sizes'), '--out', p('out', 'last.json'), '--json');
    expect(r.status).toBe(0);
    expect(readdirSync(p('sizes')).sort()).toEqual(['4x4-luma-b0.json', '4x4-luma-b1.json', '4x4-luma-b2.json', '4x4-luma-b3.json']);
    const json = JSON.parse(r.stdout);
    expect(json.sizes.map((s: { file: string }) => s.file)).toEqual([0, 1, 2, 3].map((b) => p('sizes', `4x4-luma-b${b}.json`)));
    expect(readFileSync(p('sizes', '4x4-luma-b3.json'), 'utf8')).toBe(readFileSync(p('out', 'last.json'), 'utf8'));
    for (const [b, s] of (json.sizes as { size: number; file: string }[]).entries()) expect(parseCodebookJson(readFileSync(s.file, 'utf8')).size).toBe(2 ** b);
  });

  it('refuses --keep-sizes with an init that trains one size only', async () => {
    const r = await cli('train', '--images', p('train'), '--patch', '4x4', '--bits', '3', '--init', 'random', '--keep-sizes', p('sizes'), '--out', p('out', 'never.json'));
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/--keep-sizes needs an init that trains every size/);
  });
});
