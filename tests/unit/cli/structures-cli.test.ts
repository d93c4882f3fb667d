import { mkdirSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../../server/cli/context';
import { main } from '../../../server/cli/main';
import { SWEEP_HELP } from '../../../server/cli/commands/sweep';
import { TRAIN_HELP } from '../../../server/cli/commands/train';
import { encode, loadImage, parseCodebookJson, readCurveCsv, shutdownEngineWorkers, structureCost, TRAINABLE_STRUCTURES, treeDistortions, type Codebook } from '../../../server/engine';

let dir: string;
const p = (...parts: string[]) => join(dir, ...parts);

async function cli(...argv: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  return { status: await main(argv, ctx), stdout, stderr };
}

/** An invented grey texture: a product of sines plus a hashed grain. */
async function writePng(path: string, width: number, height: number, phase: number): Promise<void> {
  const buf = Buffer.alloc(width * height);
  for (let i = 0; i < buf.length; i += 1) {
    const x = i % width;
    const y = Math.floor(i / width);
    buf[i] = Math.max(0, Math.min(255, Math.round(128 + 90 * Math.sin((x + phase) / 5) * Math.cos((y * (1 + phase / 10)) / 7) + (((i * 2654435761) >>> 0) % 17))));
  }
  await sharp(buf, { raw: { width, height, channels: 1 } }).png().toFile(path);
}

const readBook = (name: string): Codebook => parseCodebookJson(readFileSync(p(name), 'utf8'));

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-cli-structures-'));
  mkdirSync(p('train'));
  mkdirSync(p('held'));
  // 96·64 + 64·64 pixels in 2×2 patches: 1536 + 1024 = 2560 training vectors.
  await writePng(p('train', 'a.png'), 96, 64, 0);
  await writePng(p('train', 'b.png'), 64, 64, 3);
  await writePng(p('held', 'c.png'), 64, 48, 7);
}, 60_000);

afterAll(async () => {
  rmSync(dir, { recursive: true, force: true });
  await shutdownEngineWorkers();
});

/** Trains with the CLI, encodes c.png, decodes it, and returns the codebook, the decoded pixels and the engine's own reconstruction. */
async function roundTrip(name: string, ...trainArgs: string[]) {
  const trained = await cli('train', '--images', p('train'), '--patch', '2x2', '--seed', '5', '--out', p(`${name}.json`), ...trainArgs);
  expect(trained.status, trained.stderr).toBe(0);
  const encoded = await cli('encode', '--codebook', p(`${name}.json`), '--image', p('held', 'c.png'), '--out', p(`${name}.cwq`));
  expect(encoded.status, encoded.stderr).toBe(0);
  const decoded = await cli('decode', '--codebook', p(`${name}.json`), '--in', p(`${name}.cwq`), '--out', p(`${name}.png`));
  expect(decoded.status, decoded.stderr).toBe(0);
  const book = readBook(`${name}.json`);
  const { data, info } = await sharp(p(`${name}.png`)).raw().toBuffer({ resolveWithObject: true });
  const grey = Uint8Array.from({ length: info.width * info.height }, (_, i) => data[i * info.channels]);
  const engine = await encode(book, await loadImage(p('held', 'c.png'), 'luma'));
  return { book, decoded: grey, engine: engine.reconstruction };
}

async function evalJson(name: string) {
  const r = await cli('eval', '--codebook', p(`${name}.json`), '--images', p('held'), '--json');
  expect(r.status, r.stderr).toBe(0);
  return JSON.parse(r.stdout) as Record<string, unknown> & { bppFixed: number; mse: number; treeSearch?: { treeMse: number; fullSearchMse: number } };
}

describe('cellwright train --structure tree', () => {
  it('trains a balanced tree to depth --bits that encode and decode round-trip to the engine\'s reconstruction', async () => {
    const { book, decoded, engine } = await roundTrip('tree', '--structure', 'tree', '--bits', '3');
    expect(book.structure).toMatchObject({ kind: 'tree', balanced: true });
    // A balanced binary tree of depth 3 has 2^4 − 1 = 15 nodes, every one stored in the table.
    expect(book.size).toBe(15);
    expect(Array.from(decoded)).toEqual(Array.from(engine));
  }, 60_000);

  it('evaluates at b/(w·h) bpp and reports tree-search and full-search distortion, the full search never worse', async () => {
    const r = await evalJson('tree');
    // Hand-computed: 3 path bits per 2×2 block = 3/4 bpp.
    expect(r).toMatchObject({ structure: 'tree', bppFixed: 3 / 4 });
    expect(r.treeSearch!.fullSearchMse).toBeLessThanOrEqual(r.treeSearch!.treeMse);
    // The tree MSE is the encoder's own (unrounded, vector domain): the same as treeDistortions over the held-out blocks.
    const book = readBook('tree.json');
    const image = await loadImage(p('held', 'c.png'), 'luma');
    const vectors = new Float32Array((image.width / 2) * (image.height / 2) * 4);
    for (let by = 0, v = 0; by < image.height / 2; by += 1) {
      for (let bx = 0; bx < image.width / 2; bx += 1, v += 1) {
        for (let y = 0; y < 2; y += 1) for (let x = 0; x < 2; x += 1) vectors[v * 4 + y * 2 + x] = image.pixels[(by * 2 + y) * image.width + bx * 2 + x];
      }
    }
    if (book.structure.kind !== 'tree') throw new Error('not a tree');
    const expected = treeDistortions(book.codewords, book.structure, vectors, 4);
    expect(r.treeSearch!.treeMse).toBeCloseTo(expected.tree, 9);
    expect(r.treeSearch!.fullSearchMse).toBeCloseTo(expected.fullSearch, 9);
  }, 60_000);

  it('grows a greedy tree with at most --leaves leaves', async () => {
    const r = await cli('train', '--images', p('train'), '--patch', '2x2', '--bits', '4', '--structure', 'tree', '--growth', 'greedy', '--leaves', '10', '--out', p('greedy.json'));
    expect(r.status, r.stderr).toBe(0);
    const book = readBook('greedy.json');
    expect(book.structure.kind).toBe('tree');
    // A binary tree of L leaves has 2L − 1 nodes.
    expect(book.size).toBeLessThanOrEqual(2 * 10 - 1);
  }, 60_000);
});

describe('cellwright train --structure residual', () => {
  it('trains stages 2,2 with M-best search that round-trip through encode and decode to the engine\'s reconstruction', async () => {
    const { book, decoded, engine } = await roundTrip('residual', '--structure', 'residual', '--stages', '2,2', '--m-best', '4', '--refine', '1');
    expect(book.structure).toEqual({ kind: 'residual', bits: [2, 2], search: { kind: 'm-best', m: 4 } });
    // The table holds Σ 2^{b_s} = 4 + 4 codewords.
    expect(book.size).toBe(8);
    expect(Array.from(decoded)).toEqual(Array.from(engine));
    // Hand-computed: (2 + 2) bits per 2×2 block = 1 bpp.
    expect(await evalJson('residual')).toMatchObject({ structure: 'residual', bppFixed: 1 });
  }, 60_000);

  it('reaches 12 bits a block from a table of 128 codewords, where full search would need 4096 and is refused on these 2560 vectors', async () => {
    const full = await cli('train', '--images', p('train'), '--patch', '2x2', '--bits', '12', '--out', p('full12.json'));
    expect(full.status).not.toBe(0);
    const { book, decoded, engine } = await roundTrip('residual12', '--structure', 'residual', '--bits', '12', '--stages', '2');
    expect(book.structure).toMatchObject({ kind: 'residual', bits: [6, 6] });
    expect(book.size).toBe(2 ** 6 + 2 ** 6);
    expect(structureCost({ kind: 'residual', bits: [6, 6], m: 1 }, 4).tableCodewords).toBe(128);
    expect(Array.from(decoded)).toEqual(Array.from(engine));
    expect(await evalJson('residual12')).toMatchObject({ bppFixed: 12 / 4 });
  }, 60_000);

  it.each([
    [['--structure', 'residual', '--bits', '5', '--stages', '2,2'], '--stages 2,2 is 4 bits a block, --bits says 5; give one of them or make them agree'],
    [['--structure', 'tree', '--bits', '3', '--m-best', '2'], '--m-best needs --structure residual'],
    [['--structure', 'tree', '--bits', '3', '--leaves', '4'], '--leaves and --prune-rate shape a greedy tree: add --growth greedy'],
    [['--structure', 'residual', '--bits', '4', '--growth', 'greedy'], '--growth needs --structure tree'],
    [['--structure', 'tree', '--bits', '14'], 'a balanced tree of depth 14 has 32767 nodes; the table holds 16384: --bits at most 13'],
  ])('refuses %j with one line and exit status 2', async (args, message) => {
    const r = await cli('train', '--images', p('train'), '--patch', '2x2', '--out', p('refused.json'), ...args);
    expect(r).toMatchObject({ status: 2, stderr: `cellwright: error: ${message}\n` });
  });
});

describe('cellwright sweep --structure', () => {
  it('draws one tree per b of the range, each at its own fixed rate', async () => {
    const r = await cli('sweep', '--images', p('train'), '--held-out', p('held'), '--patch', '2x2', '--bits', '2..3', '--structure', 'tree', '--out', p('tree.csv'));
    expect(r.status, r.stderr).toBe(0);
    const rows = readCurveCsv(readFileSync(p('tree.csv'), 'utf8'));
    expect(rows.map((row) => [row.bits, row.codebookSize, row.bppFixed])).toEqual([[2, 7, 2 / 4], [3, 15, 3 / 4]]);
  }, 60_000);

  it('lists the structures in train and sweep help, and trains every run structure', () => {
    for (const help of [TRAIN_HELP, SWEEP_HELP]) for (const option of ['--structure KIND', '--growth balanced|greedy', '--stages S|b1,b2,…', '--m-best M', '--refine N']) expect(help).toContain(option);
    expect(TRAINABLE_STRUCTURES).toEqual(['full', 'tree', 'residual']);
  });
});
