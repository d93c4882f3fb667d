import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../../server/cli/context';
import { main } from '../../../server/cli/main';
import { TRAIN_HELP } from '../../../server/cli/commands/train';
import {
  canonicalCode, codedBits, encode, entropyBits, kraftSum, loadImage, makeCodebook, parseCodebookJson, readContainerHeader, readCurveCsv, serializeCodebook, shutdownEngineWorkers, writeContainer, type Codebook,
} from '../../../server/engine';
import { HEADER_BYTES_V3, STREAM_LENGTH_BYTES } from '../../../server/engine/format/container';

let dir: string;
const p = (...parts: string[]) => join(dir, ...parts);
const LAMBDAS = [0, 50, 300, 1500];

async function cli(...argv: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  return { status: await main(argv, ctx), stdout, stderr };
}

/** An invented grey texture: a product of sines plus a hashed grain, the same source for training and held-out images. */
async function writePng(path: string, width: number, height: number, phase: number): Promise<void> {
  const buf = Buffer.alloc(width * height);
  for (let i = 0; i < buf.length; i += 1) {
    const x = i % width;
    const y = Math.floor(i / width);
    buf[i] = Math.max(0, Math.min(255, Math.round(128 + 90 * Math.sin((x + phase) / 5) * Math.cos((y * (1 + phase / 10)) / 7) + (((i * 2654435761) >>> 0) % 17))));
  }
  await sharp(buf, { raw: { width, height, channels: 1 } }).png().toFile(path);
}

const book = (lambda: number): Codebook => parseCodebookJson(readFileSync(p(`ecvq.lambda-${lambda}.json`), 'utf8'));

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-cli-ecvq-'));
  mkdirSync(p('train'));
  mkdirSync(p('held'));
  await writePng(p('train', 'a.png'), 96, 64, 0);
  await writePng(p('train', 'b.png'), 64, 64, 3);
  await writePng(p('held', 'c.png'), 64, 48, 7);
  await writePng(p('held', 'd.png'), 40, 40, 2);
  const trained = await cli('train', '--images', p('train'), '--patch', '2x2', '--bits', '6', '--lambda', LAMBDAS.join(','), '--seed', '3', '--out', p('ecvq.json'), '--json');
  expect(trained.status, trained.stderr).toBe(0);
}, 120_000);

afterAll(async () => {
  rmSync(dir, { recursive: true, force: true });
  await shutdownEngineWorkers();
});

describe('cellwright train --lambda', () => {
  it('writes one entropy-constrained codebook per λ, with fewer codewords as λ grows', () => {
    const sizes = LAMBDAS.map((l) => book(l).size);
    for (let i = 1; i < sizes.length; i += 1) expect(sizes[i]).toBeLessThanOrEqual(sizes[i - 1]);
    expect(sizes[0]).toBe(64);
    expect(sizes.at(-1)).toBeLessThan(sizes[0]);
    for (const l of LAMBDAS) {
      const s = book(l).structure;
      expect(s).toMatchObject({ kind: 'entropy-constrained', lambda: l });
      // A complete prefix code (Kraft equality) over the cells its training kept (Cover & Thomas, Thm 5.2.1).
      if (s.kind === 'entropy-constrained') expect(kraftSum(s.codeLengths)).toBe(book(l).size > 1 ? 1 : 0.5);
    }
  });

  it('keeps the Huffman rate of each codebook\'s training usage within [H, H + 1) of its index entropy', () => {
    // Cover & Thomas, Elements of Information Theory, Thm 5.4.1: an optimal (Huffman) code has H ≤ L < H + 1.
    for (const l of LAMBDAS) {
      const b = book(l);
      if (b.structure.kind !== 'entropy-constrained') throw new Error('not entropy-constrained');
      const n = b.usage.reduce((x, y) => x + y, 0);
      const rate = codedBits(b.structure.codeLengths, b.usage) / n;
      const h = entropyBits(b.usage);
      expect(rate).toBeGreaterThanOrEqual(h - 1e-12);
      expect(rate).toBeLessThan(h + 1);
    }
  });

  it('reports an actual rate on held-out images equal to the Huffman code\'s length, within [H, H + 1) of their index entropy', async () => {
    for (const l of LAMBDAS.slice(0, 3)) {
      const evaluated = await cli('eval', '--codebook', p(`ecvq.lambda-${l}.json`), '--images', p('held'), '--json');
      expect(evaluated.status, evaluated.stderr).toBe(0);
      const report = JSON.parse(evaluated.stdout);
      expect(report).toMatchObject({ structure: 'entropy-constrained', lambda: l });
      const b = book(l);
      const lengths = b.structure.kind === 'entropy-constrained' ? canonicalCode(b.structure.codeLengths).lengths : new Uint8Array();
      const usage = new Uint32Array(b.size);
      let bits = 0;
      for (const [i, name] of ['c.png', 'd.png'].entries()) {
        const image = await loadImage(p('held', name), 'luma', name);
        const { encoded } = await encode(b, image);
        const counts = new Uint32Array(b.size);
        for (const j of encoded.indices) counts[j] += 1;
        counts.forEach((c, j) => (usage[j] += c));
        const imageBits = codedBits(lengths, counts);
        bits += imageBits;
        // The file: the version 3 header, the stream's length, and the code zero-padded to a byte; nothing else.
        expect(report.perImage[i].bytes).toBe(HEADER_BYTES_V3 + STREAM_LENGTH_BYTES + Math.ceil(imageBits / 8));
        expect(report.perImage[i].bppActual).toBeCloseTo((report.perImage[i].bytes * 8) / (image.width * image.height), 12);
      }
      const blocks = usage.reduce((x, y) => x + y, 0);
      const h = entropyBits(usage);
      // L ≥ H holds for any prefix code (ibid., Thm 5.3.1); L < H + 1 is Thm 5.4.1's bound, which a code built on the
      // training usage keeps here because the held-out images come from the same source.
      expect(bits / blocks).toBeGreaterThanOrEqual(h - 1e-12);
      expect(bits / blocks).toBeLessThan(h + 1);
    }
  });

  it('encodes and decodes an entropy-constrained codebook\'s images to the same pixels, in a version 3 Huffman container', async () => {
    const cb = p('ecvq.lambda-300.json');
    const encoded = await cli('encode', '--codebook', cb, '--image', p('held', 'c.png'), '--out', p('c.cwq'), '--recon', p('c-recon.png'));
    expect(encoded.status, encoded.stderr).toBe(0);
    expect(readContainerHeader(readFileSync(p('c.cwq')))).toMatchObject({ version: 3, layout: 'huffman', coding: 'raw' });
    const decoded = await cli('decode', '--codebook', cb, '--in', p('c.cwq'), '--out', p('c-decoded.png'));
    expect(decoded.status, decoded.stderr).toBe(0);
    const [a, b] = await Promise.all([p('c-recon.png'), p('c-decoded.png')].map((f) => sharp(f).raw().toBuffer()));
    expect(a.equals(b)).toBe(true);
  });

  it('refuses --payload packed for an entropy-coded index stream with one line', async () => {
    const r = await cli('encode', '--codebook', p('ecvq.lambda-300.json'), '--image', p('held', 'c.png'), '--out', p('packed.cwq'), '--payload', 'packed');
    expect(r.status).toBe(1);
    expect(r.stderr).toBe('cellwright: error: a huffman index stream is already entropy-coded and is stored raw; use --payload raw or auto\n');
    expect(existsSync(p('packed.cwq'))).toBe(false);
  });
});

describe('cellwright export --target c of an entropy-constrained codebook', () => {
  it('writes a C decoder that decodes the CLI\'s Huffman-coded file byte for byte as cellwright decode does', async () => {
    const r = await cli('export', '--codebook', p('ecvq.lambda-300.json'), '--target', 'c', '--out', p('firmware'));
    expect(r.status, r.stderr).toBe(0);
    expect(readFileSync(p('firmware', 'cw_codebook.h'), 'utf8')).toMatch(/#define CW_CB_LAYOUT 1 /);
    // Debian's gcc, as tests/unit/firmware does (scripts/ensure-gcc.sh installs it when missing).
    execFileSync('gcc', ['-std=c99', '-Wall', '-Wextra', '-Werror', '-O2', '-o', 'decode_file', 'cw_decode.c', 'decode_file.c'], { cwd: p('firmware'), stdio: ['ignore', 'ignore', 'pipe'] });
    const run = spawnSync(p('firmware', 'decode_file'), [p('c.cwq'), p('c.pgm')], { encoding: 'utf8' });
    expect(run.stderr).toBe('');
    expect(run.status).toBe(0);
    const pgm = readFileSync(p('c.pgm'));
    const head = /^P5\n(\d+) (\d+)\n255\n/.exec(pgm.subarray(0, 32).toString('latin1'))!;
    // The grey PNG reads back with its grey level in every channel; channel 0 is the decoded luma.
    const decoded = await sharp(p('c-decoded.png')).extractChannel(0).raw().toBuffer({ resolveWithObject: true });
    expect([Number(head[1]), Number(head[2])]).toEqual([decoded.info.width, decoded.info.height]);
    expect(pgm.subarray(head[0].length).equals(decoded.data)).toBe(true);
  });
});

describe('cellwright sweep --lambda', () => {
  it('draws one curve point per λ, which bd reads against JPEG', async () => {
    const swept = await cli('sweep', '--images', p('train'), '--held-out', p('held'), '--patch', '2x2', '--bits', '6', '--lambda', '10..2000:3', '--baseline', 'jpeg', '--qualities', '10,40,70,90', '--out', p('curve.csv'));
    expect(swept.status, swept.stderr).toBe(0);
    const points = readCurveCsv(readFileSync(p('curve.csv'), 'utf8'), 'curve.csv');
    const vq = points.filter((q) => q.codec === 'vq');
    expect(vq).toHaveLength(3);
    // Larger λ, fewer codewords and a lower actual rate.
    expect(vq[2].codebookSize!).toBeLessThan(vq[0].codebookSize!);
    expect(vq[2].bppActual).toBeLessThan(vq[0].bppActual);
    const bd = await cli('bd', '--curve', p('curve.csv'), '--json');
    expect(bd.status, bd.stderr).toBe(0);
  });

  it('refuses a range of b with --lambda', async () => {
    const r = await cli('sweep', '--images', p('train'), '--held-out', p('held'), '--patch', '2x2', '--bits', '4..6', '--lambda', '10', '--out', p('x.csv'));
    expect(r).toMatchObject({ status: 2, stderr: 'cellwright: error: --lambda draws its curve from one starting size: give --bits B, not a range\n' });
  });
});

describe('structure options', () => {
  it.each([
    [['--lambda', '5,x'], '--lambda: λ takes numbers from 0 to 1000000000, comma-separated, or a range A..B:N, got "5,x"'],
    [['--lambda', '5..1:3'], '--lambda: a λ range is A..B:N with 0 < A < B ≤ 1000000000 and N from 2 to 16, got "5..1:3"'],
    [['--stages', '2'], '--stages needs --structure residual'],
    [['--structure', 'tree', '--lambda', '5'], '--lambda trains entropy-constrained full-search codebooks; it does not combine with --structure tree'],
    [['--structure', 'residual', '--stages', '9'], '--stages must be from 1 to 8, got "9"'],
    [['--structure', 'lattice'], '--structure must be one of full, tree, residual, got "lattice"'],
  ])('refuses %j with one line and exit status 2', async (extra, message) => {
    const r = await cli('train', '--images', p('train'), '--patch', '2x2', '--bits', '4', '--out', p('refused.json'), ...extra);
    expect(r).toMatchObject({ status: 2, stderr: `cellwright: error: ${message}\n` });
    expect(existsSync(p('refused.json'))).toBe(false);
  });

  it('documents --lambda and every trainable structure in the help', () => {
    expect(TRAIN_HELP).toContain('--lambda LIST');
    expect(TRAIN_HELP).toContain('--structure KIND      full: Full search, tree: Tree-structured, residual: Residual (multistage)');
  });
});

describe('cellwright decode of tree and residual files', () => {
  // Hand-made tables of flat 2×2 codewords at 10, 20, 30, …; the files are written by the engine's container writer.
  const flat = (size: number, structure: Codebook['structure']) => {
    const codewords = new Float32Array(size * 4);
    for (let j = 0; j < size; j += 1) codewords.fill(10 * (j + 1), j * 4, j * 4 + 4);
    const training = { source: 'hand-made', vectorCount: size, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };
    return makeCodebook({ size, dimension: 4, patch: { width: 2, height: 2, channels: 1, color: 'luma' }, preprocessing: { kind: 'none' }, codewords, usage: new Uint32Array(size), training, structure });
  };
  it.each([
    // Unbalanced tree: leaves 2, 3, 4 (codewords 30, 40, 50).
    ['an unbalanced tree', flat(5, { kind: 'tree', balanced: false, children: Int32Array.from([1, 2, 3, 4, -1, -1, -1, -1, -1, -1]) }), [2, 3, 4], [30, 40, 50]],
    // Residual stages of 2 and 1 bits: (0, 4) → 10 + 50, (3, 5) → 40 + 60, (1, 4) → 20 + 50.
    ['residual stages', flat(6, { kind: 'residual', bits: [2, 1], search: { kind: 'greedy' } }), [0, 4, 3, 5, 1, 4], [60, 100, 70]],
  ])('decodes %s by table lookup', async (what, cb, indices, levels) => {
    const name = what.replace(/\W+/g, '-');
    writeFileSync(p(`${name}.json`), serializeCodebook(cb));
    writeFileSync(p(`${name}.cwq`), writeContainer(cb, { width: 6, height: 2, blocksX: 3, blocksY: 1, indices: Uint32Array.from(indices), meanCodes: null }));
    const r = await cli('decode', '--codebook', p(`${name}.json`), '--in', p(`${name}.cwq`), '--out', p(`${name}.png`));
    expect(r.status, r.stderr).toBe(0);
    const { data, info } = await sharp(p(`${name}.png`)).raw().toBuffer({ resolveWithObject: true });
    const firstRow = Array.from({ length: 6 }, (_, x) => data[x * info.channels]);
    expect(firstRow).toEqual(levels.flatMap((v) => [v, v]));
  });

  it('encodes with a hand-made tree codebook, each block to its nearer leaf by descent', async () => {
    const r = await cli('encode', '--codebook', p('an-unbalanced-tree.json'), '--image', p('held', 'c.png'), '--out', p('tree.cwq'));
    expect(r.status, r.stderr).toBe(0);
    expect(existsSync(p('tree.cwq'))).toBe(true);
  });
});

describe('cellwright eval on a revision 1 codebook', () => {
  it('reads a file written before structures existed as full search', async () => {
    const v1 = new URL('../../fixtures/container-v1/codebook.json', import.meta.url);
    mkdirSync(p('rgb'));
    const buf = Buffer.alloc(12 * 8 * 3);
    for (let i = 0; i < buf.length; i += 1) buf[i] = (i * 37) % 256;
    await sharp(buf, { raw: { width: 12, height: 8, channels: 3 } }).png().toFile(p('rgb', 'x.png'));
    const r = await cli('eval', '--codebook', v1.pathname, '--images', p('rgb'), '--json');
    expect(r.status, r.stderr).toBe(0);
    expect(JSON.parse(r.stdout)).toMatchObject({ structure: 'full', size: 5, bppFixed: (3 + 3) / 6 });
  });
});
