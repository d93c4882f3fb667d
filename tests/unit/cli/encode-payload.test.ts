import { copyFileSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../../server/cli/main';
import type { CliContext } from '../../../server/cli/context';
import { makeCodebook, readContainerHeader, shutdownEngineWorkers } from '../../../server/engine';
import { serializeCodebook } from '../../../server/engine/format/codebook-schema';

let dir: string;
const p = (name: string) => join(dir, name);

async function cli(...argv: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  const status = await main(argv, ctx);
  return { status, stdout, stderr };
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-payload-'));
  // Sixteen flat 4×4 luma codewords 0, 17, …, 255 (invented), and a 40×24 ramp to code with them.
  const codewords = new Float32Array(16 * 16);
  for (let k = 0; k < 16; k += 1) codewords.fill(17 * k, 16 * k, 16 * k + 16);
  const training = { source: 'invented', vectorCount: 16, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };
  const book = makeCodebook({ size: 16, dimension: 16, patch: { width: 4, height: 4, channels: 1, color: 'luma' }, preprocessing: { kind: 'none' }, codewords, usage: new Uint32Array(16), training });
  writeFileSync(p('book.json'), serializeCodebook(book));
  const ramp = Buffer.alloc(40 * 24);
  for (let i = 0; i < ramp.length; i += 1) ramp[i] = (i % 40) * 6;
  await sharp(ramp, { raw: { width: 40, height: 24, channels: 1 } }).png().toFile(p('ramp.png'));
  mkdirSync(p('ramp-only'));
  copyFileSync(p('ramp.png'), p('ramp-only/ramp.png'));
});

afterAll(async () => {
  rmSync(dir, { recursive: true, force: true });
  await shutdownEngineWorkers();
});

describe('cellwright encode --payload', () => {
  it('writes the raw fixed-rate payload: 10 × 6 blocks at 4 bits is 30 bytes after the 68-byte header', async () => {
    const r = await cli('encode', '--codebook', p('book.json'), '--image', p('ramp.png'), '--out', p('raw.cwq'), '--payload', 'raw', '--json');
    expect(r.stderr).toBe('');
    expect(JSON.parse(r.stdout)).toMatchObject({ bytes: 98, coding: 'raw', resyncRows: 0 });
    expect(readFileSync(p('raw.cwq')).length).toBe(98);
  });

  it('writes a marker every 2 block rows: 3 segments of 10 bytes and 2 markers of 4', async () => {
    const r = await cli('encode', '--codebook', p('book.json'), '--image', p('ramp.png'), '--out', p('marked.cwq'), '--payload', 'raw', '--resync', '2');
    expect(r.stderr).toBe('');
    expect(r.stdout).toMatch(/→ 106 bytes, raw, a marker every 2 block rows/);
    expect(readContainerHeader(readFileSync(p('marked.cwq')))).toMatchObject({ version: 2, resyncRows: 2, storedLength: 38 });
    const dec = await cli('decode', '--codebook', p('book.json'), '--in', p('marked.cwq'), '--out', p('marked.png'));
    expect(dec.stderr).toBe('');
  });

  it('writes a compressed payload for packed', async () => {
    const r = await cli('encode', '--codebook', p('book.json'), '--image', p('ramp.png'), '--out', p('packed.cwq'), '--payload', 'packed', '--json');
    expect(['deflate', 'brotli']).toContain(JSON.parse(r.stdout).coding);
  });

  it('reports the size alone, and MSE and PSNR only with --metrics (the decoded image\'s, as eval measures them)', async () => {
    const plain = await cli('encode', '--codebook', p('book.json'), '--image', p('ramp.png'), '--out', p('m.cwq'), '--json');
    expect(plain.stderr).toBe('');
    expect(JSON.parse(plain.stdout)).not.toHaveProperty('mse');
    expect(JSON.parse(plain.stdout)).not.toHaveProperty('psnr');
    const text = await cli('encode', '--codebook', p('book.json'), '--image', p('ramp.png'), '--out', p('m.cwq'));
    expect(text.stdout).not.toMatch(/MSE|PSNR/);
    const measured = await cli('encode', '--codebook', p('book.json'), '--image', p('ramp.png'), '--out', p('m.cwq'), '--metrics', '--json');
    const evalled = await cli('eval', '--codebook', p('book.json'), '--images', p('ramp-only'), '--json');
    expect(evalled.stderr).toBe('');
    expect(JSON.parse(measured.stdout).mse).toBe(JSON.parse(evalled.stdout).mse);
    expect((await cli('encode', '--codebook', p('book.json'), '--image', p('ramp.png'), '--out', p('m.cwq'), '--metrics')).stdout).toMatch(/MSE [0-9.]+, PSNR /);
  });

  it('refuses --resync without --payload raw, and an unknown payload word, before writing anything', async () => {
    const before = readdirSync(dir).sort();
    const a = await cli('encode', '--codebook', p('book.json'), '--image', p('ramp.png'), '--out', p('x.cwq'), '--resync', '2');
    expect(a.status).toBe(2);
    expect(a.stderr).toBe('cellwright: error: --resync needs --payload raw (a compressed payload hides the markers)\n');
    const b = await cli('encode', '--codebook', p('book.json'), '--image', p('ramp.png'), '--out', p('x.cwq'), '--payload', 'zip');
    expect(b.stderr).toBe('cellwright: error: --payload must be one of raw, packed, auto, got "zip"\n');
    expect(readdirSync(dir).sort()).toEqual(before);
  });
});
