import { execFile } from 'node:child_process';
import { mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../../server/cli/context';
import { main } from '../../../server/cli/main';

const run = promisify(execFile);
let dir: string;
const p = (...parts: string[]) => join(dir, ...parts);

async function cli(...argv: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  const status = await main(argv, ctx);
  return { status, stdout, stderr };
}

async function numpy(script: string): Promise<unknown> {
  const { stdout } = await run('python3', ['-c', `import json, numpy as np\n${script}`], { cwd: dir });
  return JSON.parse(stdout);
}

/** A textured RGB test image, 18 × 13 pixels so the 4 × 3 blocks need edge padding on both sides. */
async function writePng(path: string, phase: number): Promise<void> {
  const w = 18;
  const h = 13;
  const buf = Buffer.alloc(w * h * 3);
  for (let i = 0; i < w * h * 3; i += 1) buf[i] = Math.round(128 + 100 * Math.sin((i + phase) / 7) * Math.cos(i / 23));
  await sharp(buf, { raw: { width: w, height: h, channels: 3 } }).png().toFile(path);
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-export-'));
  for (const d of ['train', 'held', 'out', 'means-out']) mkdirSync(p(d));
  for (let k = 0; k < 3; k += 1) await writePng(p('train', `t${k}.png`), 11 * k);
  await writePng(p('held', 'reef.png'), 5);
  expect((await cli('train', '--images', p('train'), '--patch', '4x3', '--color', 'rgb', '--bits', '3', '--seed', '1', '--out', p('book.json'))).status).toBe(0);
  expect((await cli('train', '--images', p('train'), '--patch', '4x3', '--color', 'luma', '--mean-bits', '4', '--bits', '2', '--seed', '1', '--out', p('means.json'))).status).toBe(0);
  expect((await cli('encode', '--codebook', p('book.json'), '--image', p('held', 'reef.png'), '--out', p('reef.cwc'), '--recon', p('reef-recon.png'))).status).toBe(0);
}, 60_000);

afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** The NumPy decoder FORMAT.md shows, taken from the file as written (the block after its marker). */
function formatMdDecoder(): string {
  const md = readFileSync(new URL('../../../server/engine/format/FORMAT.md', import.meta.url), 'utf8');
  const after = md.slice(md.indexOf('<!-- numpy-decoder:'));
  const match = /```python\n([\s\S]*?)```/.exec(after);
  if (!match) throw new Error('FORMAT.md has no NumPy decoder block');
  return match[1];
}

describe('the NumPy reader in FORMAT.md', () => {
  it.each([
    ['an rgb codebook', 'book.json', 'reef'],
    ['a mean-removed luma codebook', 'means.json', 'reef-means'],
  ])('decodes a coded file of %s to the pixels of cellwright decode', async (_what, codebook, name) => {
    expect((await cli('encode', '--codebook', p(codebook), '--image', p('held', 'reef.png'), '--out', p(`${name}.cwc`))).status).toBe(0);
    expect((await cli('decode', '--codebook', p(codebook), '--in', p(`${name}.cwc`), '--out', p(`${name}-decoded.png`))).status).toBe(0);
    // Payload codings 0 and 1 need only the standard library; tiny payloads are stored raw or deflated.
    expect([0, 1]).toContain(readFileSync(p(`${name}.cwc`))[5]);
    const channels = codebook === 'book.json' ? 3 : 1;
    const png = sharp(p(`${name}-decoded.png`));
    const { data } = await (channels === 1 ? png.extractChannel(0) : png.removeAlpha()).raw().toBuffer({ resolveWithObject: true });
    const decoded = (await numpy(`${formatMdDecoder()}
indices, image = read_coded('${name}.cwc', '${codebook}')
print(json.dumps({'shape': image.shape, 'pixels': image.astype(int).ravel().tolist()}))`)) as { shape: number[]; pixels: number[] };
    expect(decoded.shape).toEqual([13, 18, channels]);
    expect(decoded.pixels).toEqual([...data]);
  });
});

describe('cellwright export --target npy', () => {
  it('writes codewords and index maps that rebuild the decoded image in plain NumPy', async () => {
    const r = await cli('export', '--codebook', p('book.json'), '--target', 'npy', '--out', p('out'), '--images', p('held'), '--json');
    expect(r.status).toBe(0);
    expect(JSON.parse(r.stdout).files).toEqual([p('out', 'codewords.npy'), p('out', 'reef.indices.npy')]);
    const book = JSON.parse(readFileSync(p('book.json'), 'utf8')) as { codewords: number[][] };
    const { data } = await sharp(p('reef-recon.png')).removeAlpha().raw().toBuffer({ resolveWithObject: true });
    // The decoder of FORMAT.md, written in NumPy: codeword per block, rounded half up, clamped, blocks put back in
    // raster order (4 × 3 pixels × RGB, row by row), the padding cropped.
    const out = (await numpy(`cw = np.load('out/codewords.npy')
idx = np.load('out/reef.indices.npy')
blocks = np.clip(np.floor(cw.astype(np.float64)[idx] + 0.5), 0, 255)
by, bx = idx.shape
img = blocks.reshape(by, bx, 3, 4, 3).transpose(0, 2, 1, 3, 4).reshape(by * 3, bx * 4, 3)[:13, :18]
print(json.dumps({'cw': cw.astype(float).tolist(), 'dtype': str(idx.dtype), 'shape': idx.shape, 'pixels': img.astype(int).ravel().tolist()}))`)) as {
      cw: number[][]; dtype: string; shape: number[]; pixels: number[];
    };
    expect(out.cw).toEqual(book.codewords.map((row) => row.map((v) => Math.fround(v))));
    expect(out.dtype).toBe('uint16');
    // ⌈13/3⌉ × ⌈18/4⌉ blocks
    expect(out.shape).toEqual([5, 5]);
    expect(out.pixels).toEqual([...data]);
  });

  it('reads the index map of a coded file, equal to the one coded from the image', async () => {
    mkdirSync(p('coded-out'));
    expect((await cli('export', '--codebook', p('book.json'), '--target', 'npy', '--out', p('coded-out'), '--coded', p('reef.cwc'))).status).toBe(0);
    expect(readFileSync(p('coded-out', 'reef.indices.npy'))).toEqual(readFileSync(p('out', 'reef.indices.npy')));
  });

  it("writes a mean-removed codebook's block mean codes beside its index map", async () => {
    expect((await cli('export', '--codebook', p('means.json'), '--target', 'npy', '--out', p('means-out'), '--images', p('held'))).status).toBe(0);
    expect(readdirSync(p('means-out')).sort()).toEqual(['codewords.npy', 'reef.indices.npy', 'reef.means.npy']);
    const means = (await numpy(`a = np.load('means-out/reef.means.npy')\nprint(json.dumps({'dtype': str(a.dtype), 'shape': a.shape, 'max': int(a.max())}))`)) as { dtype: string; shape: number[]; max: number };
    expect(means).toMatchObject({ dtype: 'uint8', shape: [5, 5] });
    expect(means.max).toBeLessThan(16);
  });

  it('refuses a missing target and an output that is not a folder, writing nothing', async () => {
    const noTarget = await cli('export', '--codebook', p('book.json'), '--out', p('out'));
    expect(noTarget.status).toBe(2);
    expect(noTarget.stderr).toMatch(/needs --target/);
    const notFolder = await cli('export', '--codebook', p('book.json'), '--target', 'npy', '--out', p('book.json'));
    expect(notFolder.status).toBe(1);
    expect(notFolder.stderr).toMatch(/is not a folder/);
  });
});
