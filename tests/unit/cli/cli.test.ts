import { execFile } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync, mkdirSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../../server/cli/main';
import type { CliContext } from '../../../server/cli/context';
import {
  CURVE_CSV_COLUMNS, decodeImage, evaluate, EXACT, IMAGE_CSV_COLUMNS, imagesToTrainingVectors, parseCodebookJson, readNpy, shutdownEngineWorkers,
  trainCodebooks, writeNpy,
} from '../../../server/engine';

const run = promisify(execFile);
const LAUNCHER = new URL('../../../scripts/cellwright.mjs', import.meta.url).pathname;

let dir: string;
const p = (...parts: string[]) => join(dir, ...parts);

/** Runs a command in-process, as the launcher would, and returns what it printed. */
async function cli(...argv: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  const status = await main(argv, ctx);
  return { status, stdout, stderr };
}

/** Writes a textured test image as PNG with sharp. */
async function writeTestPng(path: string, width: number, height: number, phase: number): Promise<void> {
  const buf = Buffer.alloc(width * height * 3);
  for (let y = 0; y < height; y += 1) {
    for (let x = 0; x < width; x += 1) {
      for (let c = 0; c < 3; c += 1) {
        const v = 128 + 90 * Math.sin((x + phase) / (5 + c)) * Math.cos((y - phase) / 7) + 30 * Math.sin(x * y * 0.013 + c);
        buf[(y * width + x) * 3 + c] = Math.max(0, Math.min(255, Math.round(v)));
      }
    }
  }
  await sharp(buf, { raw: { width, height, channels: 3 } }).png().toFile(path);
}

function expectOneErrorLine(result: { status: number; stderr: string; stdout: string }, pattern: RegExp) {
  expect(result.status).not.toBe(0);
  expect(result.stdout).toBe('');
  const lines = result.stderr.split('\n').filter(Boolean);
  expect(lines).toHaveLength(1);
  expect(lines[0]).toMatch(/^cellwright: error: /);
  expect(lines[0]).toMatch(pattern);
}

/** No output and no temporary file left in the folder. */
function expectNothingWritten(folder: string, before: string[]) {
  expect(readdirSync(folder).sort()).toEqual(before);
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-cli-'));
  for (const d of ['train', 'held', 'empty', 'out', 'broken']) mkdirSync(p(d));
  await writeTestPng(p('train', 'a.png'), 64, 48, 0);
  await writeTestPng(p('train', 'b.png'), 40, 40, 5);
  await writeTestPng(p('held', 'c.png'), 37, 29, 9);
  await writeTestPng(p('held', 'd.png'), 24, 19, 2);
  writeFileSync(p('broken', 'bad.png'), 'this is not a PNG');
  writeFileSync(p('notes.txt'), 'hello');
});

afterAll(async () => {
  await shutdownEngineWorkers();
  rmSync(dir, { recursive: true, force: true });
});

describe('cellwright train', () => {
  it('trains on an image folder and prints JSON that matches the codebook it wrote', async () => {
    const r = await cli('train', '--images', p('train'), '--patch', '4x4', '--bits', '4', '--seed', '3', '--out', p('out', 'cb.json'), '--json');
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    const json = JSON.parse(r.stdout);
    const book = parseCodebookJson(readFileSync(p('out', 'cb.json'), 'utf8'));
    expect(json).toMatchObject({ bits: 4, size: 16, dimension: 16, iterations: book.training.iterations, distortion: book.training.distortion, checksum: book.checksum });
    expect(json.sizes.map((s: { size: number }) => s.size)).toEqual([1, 2, 4, 8, 16]);
  });

  it('trains the same codebook as the library does on the same vectors and seed', async () => {
    const images = [await decodeImage(p('train', 'a.png'), 'luma'), await decodeImage(p('train', 'b.png'), 'luma')];
    const patch = { width: 4, height: 4, channels: 1 as const, color: 'luma' as const };
    const { vectors, dimension } = imagesToTrainingVectors(images, { patch, seed: 3 });
    const books = await trainCodebooks(vectors, dimension, { bits: 4, init: 'split', seed: 3, patch, preprocessing: { kind: 'none' }, source: 'x' });
    const cliBook = parseCodebookJson(readFileSync(p('out', 'cb.json'), 'utf8'));
    expect(cliBook.checksum).toBe(books[4].checksum);
  });

  it('trains on a .npy file of vectors, mean-removed rgb images and non-square patches', async () => {
    const rng = Float32Array.from({ length: 300 * 6 }, (_, i) => Math.sin(i * 12.9898) * 43758.5453 % 1);
    writeFileSync(p('v.npy'), writeNpy(rng, 300, 6));
    const r = await cli('train', '--vectors', p('v.npy'), '--bits', '3', '--init', 'kmeans++', '--out', p('out', 'v.json'), '--json');
    expect(r.stderr).toBe('');
    expect(JSON.parse(r.stdout)).toMatchObject({ bits: 3, size: 8, dimension: 6, vectorCount: 300, patch: null });
    const rgb = await cli('train', '--images', p('train'), '--patch', '4x2', '--color', 'rgb', '--mean-bits', '5', '--stride', '2', '--bits', '3', '--out', p('out', 'rgb.json'), '--json');
    expect(rgb.stderr).toBe('');
    expect(JSON.parse(rgb.stdout)).toMatchObject({ dimension: 24, patch: { width: 4, height: 2, channels: 3, color: 'rgb' }, preprocessing: { kind: 'mean-removed', meanBits: 5 } });
  });
});

describe('cellwright eval', () => {
  it('reports the same figures as the library for images', async () => {
    const r = await cli('eval', '--codebook', p('out', 'cb.json'), '--images', p('held'), '--json');
    expect(r.stderr).toBe('');
    const json = JSON.parse(r.stdout);
    const book = parseCodebookJson(readFileSync(p('out', 'cb.json'), 'utf8'));
    const images = [await decodeImage(p('held', 'c.png'), 'luma', p('held', 'c.png')), await decodeImage(p('held', 'd.png'), 'luma', p('held', 'd.png'))];
    const lib = await evaluate(book, images);
    expect(json).toMatchObject({
      bits: 4, size: 16, dimension: 16, images: 2,
      mse: lib.overall.mse, psnr: lib.overall.psnr, ssim: lib.overall.ssim,
      bppFixed: 0.25, bppEntropy: lib.overall.bppEntropy, bppActual: lib.overall.bppActual,
    });
    expect(json.perImage.map((i: { name: string }) => i.name)).toEqual([p('held', 'c.png'), p('held', 'd.png')]);
    expect(json.usage.reduce((a: number, b: number) => a + b, 0)).toBe(10 * 8 + 6 * 5);
  });

  it('writes the per-image CSV with the engine per-image columns (those of the studio download) and the figures of --json', async () => {
    const r = await cli('eval', '--codebook', p('out', 'cb.json'), '--images', p('held'), '--json', '--csv', p('out', 'per-image.csv'));
    expect(r.stderr).toBe('');
    const json = JSON.parse(r.stdout);
    const text = readFileSync(p('out', 'per-image.csv'), 'utf8');
    expect(text.endsWith('\r\n')).toBe(true);
    const [header, ...rows] = text.slice(0, -2).split('\r\n').map((l) => l.split(','));
    expect(header).toEqual([...IMAGE_CSV_COLUMNS]);
    const col = (name: (typeof IMAGE_CSV_COLUMNS)[number]) => IMAGE_CSV_COLUMNS.indexOf(name);
    expect(rows.map((c) => [c[col('codebook')], c[col('bits')], c[col('codebook_size')], c[col('image')], c[col('width_px')], c[col('height_px')]])).toEqual([
      ['cb.json', '4', '16', 'c.png', '37', '29'],
      ['cb.json', '4', '16', 'd.png', '24', '19'],
    ]);
    rows.forEach((c, i) => {
      const m = json.perImage[i];
      expect([c[col('coded_bytes')], c[col('bpp_fixed')], c[col('bpp_entropy')], c[col('bpp_actual')], c[col('mse')], c[col('psnr_db')], c[col('ssim')]].map(Number))
        .toEqual([m.bytes, m.bppFixed, m.bppEntropy, m.bppActual, m.mse, m.psnr, m.ssim]);
    });
  });

  it('refuses --csv with --vectors, since the CSV holds per-image figures', async () => {
    const r = await cli('eval', '--codebook', p('out', 'v.json'), '--vectors', p('v.npy'), '--csv', p('out', 'v.csv'));
    expectOneErrorLine(r, /--csv writes per-image figures; it needs --images/);
    expect(r.status).toBe(2);
    expect(existsSync(p('out', 'v.csv'))).toBe(false);
  });

  it('reports MSE and rates, without PSNR or SSIM, for vectors', async () => {
    const r = await cli('eval', '--codebook', p('out', 'v.json'), '--vectors', p('v.npy'), '--json');
    expect(r.stderr).toBe('');
    const json = JSON.parse(r.stdout);
    const book = parseCodebookJson(readFileSync(p('out', 'v.json'), 'utf8'));
    const npy = readNpy(readFileSync(p('v.npy')));
    const lib = await evaluate(book, { vectors: npy.data, dimension: npy.cols });
    expect(json).toMatchObject({ bits: 3, size: 8, dimension: 6, vectors: 300, mse: lib.mse, bppFixed: 3 / 6, bppEntropy: lib.bppEntropy, rateUnit: 'bits per component' });
    expect(json).not.toHaveProperty('psnr');
    expect(json).not.toHaveProperty('ssim');
  });

  it('shows ∞ (exact) in text, null in JSON and inf in CSV when the codebook reproduces the images exactly', async () => {
    // Two flat 4×4 block values, aligned with the grid: two codewords reproduce every block exactly, so MSE = 0.
    const pix = Buffer.alloc(16 * 16, 0).map((_, i) => (Math.floor((i % 16) / 4) + Math.floor(i / 64)) % 2 ? 200 : 20);
    mkdirSync(p('exact'));
    await sharp(pix, { raw: { width: 16, height: 16, channels: 1 } }).png().toFile(p('exact', 'e.png'));
    expect((await cli('train', '--images', p('exact'), '--patch', '4x4', '--bits', '1', '--out', p('out', 'e.json'))).status).toBe(0);
    const json = JSON.parse((await cli('eval', '--codebook', p('out', 'e.json'), '--images', p('exact'), '--json')).stdout);
    expect(json).toMatchObject({ mse: 0, psnr: null, ssim: 1 });
    const text = (await cli('eval', '--codebook', p('out', 'e.json'), '--images', p('exact'), '--csv', p('out', 'exact.csv'))).stdout;
    expect(text).toContain(EXACT.text);
    const [header, row] = readFileSync(p('out', 'exact.csv'), 'utf8').split('\r\n').map((l) => l.split(','));
    expect(row[header.indexOf('psnr_db')]).toBe('inf');
  });
});

describe('cellwright encode and decode', () => {
  it('decodes to the PNG encode wrote as the reconstruction, pixel for pixel the image eval measured', async () => {
    const enc = await cli('encode', '--codebook', p('out', 'rgb.json'), '--image', p('held', 'c.png'), '--out', p('out', 'c.cwq'), '--recon', p('out', 'c-recon.png'), '--error-map', p('out', 'c-err.png'), '--metrics', '--json');
    expect(enc.stderr).toBe('');
    const dec = await cli('decode', '--codebook', p('out', 'rgb.json'), '--in', p('out', 'c.cwq'), '--out', p('out', 'c.png'));
    expect(dec.stderr).toBe('');
    const decoded = await sharp(p('out', 'c.png')).raw().toBuffer();
    const recon = await sharp(p('out', 'c-recon.png')).raw().toBuffer();
    expect(decoded.equals(recon)).toBe(true);
    const book = parseCodebookJson(readFileSync(p('out', 'rgb.json'), 'utf8'));
    const lib = await evaluate(book, [await decodeImage(p('held', 'c.png'), 'rgb')], { keepOutputs: true });
    expect(new Uint8Array(decoded)).toEqual(lib.images[0].reconstruction);
    expect(JSON.parse(enc.stdout)).toMatchObject({ bytes: lib.images[0].bytes, mse: lib.images[0].mse });
    const err = await sharp(p('out', 'c-err.png')).metadata();
    expect([err.width, err.height, err.channels]).toEqual([37, 29, 1]);
  });
});

describe('cellwright sweep', () => {
  it('writes a CSV whose header carries units, one row per codebook size and per codec quality', async () => {
    const r = await cli('sweep', '--images', p('train'), '--held-out', p('held'), '--patch', '4x4', '--bits', '1..3', '--baseline', 'jpeg,webp', '--qualities', '20,80', '--out', p('out', 'curve.csv'));
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    const text = readFileSync(p('out', 'curve.csv'), 'utf8');
    // RFC 4180 §2 rule 1: every record ends with CRLF; the header is the engine's curve columns, the studio's too.
    expect(text.endsWith('\r\n')).toBe(true);
    const lines = text.slice(0, -2).split('\r\n');
    expect(lines[0]).toBe('codec,codebook,bits,codebook_size,quality,bpp_fixed,bpp_entropy,bpp_actual,mse,psnr_db,ssim');
    expect(lines[0]).toBe(CURVE_CSV_COLUMNS.join(','));
    const rows = lines.slice(1).map((l) => l.split(','));
    const col = (name: (typeof CURVE_CSV_COLUMNS)[number]) => CURVE_CSV_COLUMNS.indexOf(name);
    expect(rows.map((c) => `${c[col('codec')]}:${c[col('codebook_size')] || c[col('quality')]}`)).toEqual(['vq:2', 'vq:4', 'vq:8', 'jpeg:20', 'jpeg:80', 'webp:20', 'webp:80']);
    // Fixed rate of b bits per 16-pixel block is b/16 bpp.
    expect(rows.slice(0, 3).map((c) => Number(c[col('bpp_fixed')]))).toEqual([1 / 16, 2 / 16, 3 / 16]);
    // LBG (split) passes through every smaller size, so the K = 8 row is the codebook `train --bits 3` makes with the
    // same seed, and its figures are what `eval` reports for it.
    expect((await cli('train', '--images', p('train'), '--patch', '4x4', '--bits', '3', '--out', p('out', 'k8.json'))).status).toBe(0);
    const k8 = JSON.parse((await cli('eval', '--codebook', p('out', 'k8.json'), '--images', p('held'), '--json')).stdout);
    expect(rows[2].slice(col('bpp_fixed'), col('ssim') + 1).map(Number)).toEqual([k8.bppFixed, k8.bppEntropy, k8.bppActual, k8.mse, k8.psnr, k8.ssim]);
  });
});

describe('bad input', () => {
  const cases: [string, () => string[], RegExp][] = [
    ['a missing image folder', () => ['train', '--images', p('nope'), '--patch', '4x4', '--bits', '2', '--out', p('out', 'x.json')], /cannot read image folder .*nope: no such file or directory/],
    ['a folder without images', () => ['train', '--images', p('empty'), '--patch', '4x4', '--bits', '2', '--out', p('out', 'x.json')], /holds no images/],
    ['a corrupt image', () => ['train', '--images', p('broken'), '--patch', '4x4', '--bits', '2', '--out', p('out', 'x.json')], /bad\.png: cannot decode image/],
    ['bits out of range', () => ['train', '--images', p('train'), '--patch', '4x4', '--bits', '15', '--out', p('out', 'x.json')], /--bits must be an integer from 0 to 14, got "15"/],
    ['a bad patch', () => ['train', '--images', p('train'), '--patch', '1x4', '--bits', '2', '--out', p('out', 'x.json')], /patch width must be an integer from 2 to 16/],
    ['an unknown option', () => ['train', '--images', p('train'), '--patch', '4x4', '--bits', '2', '--colour', 'rgb', '--out', p('out', 'x.json')], /unknown option --colour for "cellwright train"/],
    ['a .npy file of the wrong shape', () => ['train', '--vectors', p('cube.npy'), '--bits', '1', '--out', p('out', 'x.json')], /expected a 1-D or 2-D array, got shape \(2, 2, 2\)/],
    ['a file that is not .npy', () => ['train', '--vectors', p('notes.txt'), '--bits', '1', '--out', p('out', 'x.json')], /not a \.npy file/],
    ['more codewords than vectors', () => ['train', '--vectors', p('v.npy'), '--bits', '10', '--out', p('out', 'x.json')], /300 training vectors cannot fill 1024 codewords/],
    ['a codebook of another dimension', () => ['eval', '--codebook', p('out', 'cb.json'), '--vectors', p('v.npy')], /dimension 6, codebook .* has dimension 16/],
    ['a missing codebook', () => ['eval', '--codebook', p('out', 'none.json'), '--images', p('held')], /cannot read codebook .*none\.json: no such file or directory/],
    ['a malformed codebook', () => ['eval', '--codebook', p('notes.txt'), '--images', p('held')], /not valid JSON/],
    ['a coded file from another codebook', () => ['decode', '--codebook', p('out', 'cb.json'), '--in', p('out', 'c.cwq'), '--out', p('out', 'x.png')], /c\.cwq: coded with a different codebook/],
    ['a foreign coded file', () => ['decode', '--codebook', p('out', 'rgb.json'), '--in', p('notes.txt'), '--out', p('out', 'x.png')], /notes\.txt: not a Cellwright coded image/],
    ['an unknown command', () => ['squash'], /unknown command "squash"/],
  ];

  beforeAll(() => {
    // A 2×2×2 float32 array written by hand per NEP 1.
    const header = "{'descr': '<f4', 'fortran_order': False, 'shape': (2, 2, 2), }";
    const padded = header + ' '.repeat(64 - ((10 + header.length + 1) % 64)) + '\n';
    const file = Buffer.alloc(10 + padded.length + 32);
    Buffer.from([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 1, 0]).copy(file);
    file.writeUInt16LE(padded.length, 8);
    file.write(padded, 10, 'latin1');
    writeFileSync(p('cube.npy'), file);
  });

  it.each(cases)('reports %s in one error line, exits non-zero and writes nothing', async (_what, args, pattern) => {
    const before = readdirSync(p('out')).sort();
    const r = await cli(...args());
    expectOneErrorLine(r, pattern);
    expectNothingWritten(p('out'), before);
  });

  it('exits 2 for usage mistakes and 1 for bad data', async () => {
    expect((await cli('train', '--bits', 'x')).status).toBe(2);
    expect((await cli('eval', '--codebook', p('notes.txt'), '--images', p('held'))).status).toBe(1);
  });
});

describe('the launcher', () => {
  it('prints help per command and exits 0', async () => {
    const { stdout } = await run(process.execPath, [LAUNCHER, 'train', '--help']);
    expect(stdout).toMatch(/^Usage: cellwright train/);
    for (const command of ['eval', 'encode', 'decode', 'sweep', 'export']) {
      expect((await cli(command, '--help')).stdout).toMatch(new RegExp(`^Usage: cellwright ${command}`));
    }
  });

  it('runs as a process: one stderr line and a non-zero status for bad input, and no output file', async () => {
    const out = p('out', 'never.json');
    const failure = await run(process.execPath, [LAUNCHER, 'train', '--images', p('train'), '--patch', '4x4', '--bits', '99', '--out', out]).catch((e) => e);
    expect(failure.code).toBe(2);
    expect(failure.stderr).toBe('cellwright: error: --bits must be an integer from 0 to 14, got "99"\n');
    expect(existsSync(out)).toBe(false);
  });
});
