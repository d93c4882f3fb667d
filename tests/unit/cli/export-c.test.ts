import { execFileSync, spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../../server/cli/main';
import type { CliContext } from '../../../server/cli/context';
import { makeCodebook, shutdownEngineWorkers } from '../../../server/engine';
import { serializeCodebook } from '../../../server/engine/format/codebook-schema';

let dir: string;
const p = (...parts: string[]) => join(dir, ...parts);

async function cli(...argv: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  const status = await main(argv, ctx);
  return { status, stdout, stderr };
}

const training = { source: 'invented', vectorCount: 1, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-export-'));
  mkdirSync(p('held'));
  // Invented codebooks: 8 flat-ish 2×2 luma codewords off the integer grid, and the same as mean-removed residuals.
  const plain = new Float32Array(8 * 4);
  const residual = new Float32Array(8 * 4);
  for (let i = 0; i < plain.length; i += 1) {
    plain[i] = 30 * Math.floor(i / 4) + 0.3 * (i % 4) + 0.37;
    residual[i] = ((i * 7) % 13) - 6.123;
  }
  const patch = { width: 2, height: 2, channels: 1 as const, color: 'luma' as const };
  const book = (codewords: Float32Array, meanBits: number) =>
    serializeCodebook(makeCodebook({
      size: 8, dimension: 4, patch, codewords, usage: new Uint32Array(8), training,
      preprocessing: meanBits ? { kind: 'mean-removed', meanBits } : { kind: 'none' },
    }));
  writeFileSync(p('plain.json'), book(plain, 0));
  writeFileSync(p('mean.json'), book(residual, 5));
  const ramp = Buffer.alloc(21 * 13);
  for (let i = 0; i < ramp.length; i += 1) ramp[i] = ((i % 21) * 11 + Math.floor(i / 21) * 5) % 256;
  await sharp(ramp, { raw: { width: 21, height: 13, channels: 1 } }).png().toFile(p('held', 'ramp.png'));
});

afterAll(async () => {
  rmSync(dir, { recursive: true, force: true });
  await shutdownEngineWorkers();
});

describe('cellwright export --target c', () => {
  it('writes a bundle that builds with one gcc -std=c99 command and decodes encode\'s raw file as decode does', async () => {
    const r = await cli('export', '--codebook', p('plain.json'), '--target', 'c', '--out', p('fw'), '--images', p('held'), '--json');
    expect(r.stderr).toBe('');
    const report = JSON.parse(r.stdout);
    expect(report).toMatchObject({ command: 'export', target: 'c', table: { type: 'uint8', fractionBits: 0 }, roundingCost: { costDb: 0, differing: 0 } });
    expect(readdirSync(p('fw')).sort()).toEqual(['README.md', 'cw_codebook.h', 'cw_decode.c', 'cw_decode.h', 'decode_file.c']);
    expect(readFileSync(p('fw', 'README.md'), 'utf8')).toContain('gcc -std=c99 -Wall -Wextra -O2 -o decode_file *.c');
    execFileSync('sh', ['-c', 'gcc -std=c99 -Wall -Wextra -Werror -O2 -o decode_file *.c'], { cwd: p('fw') });
    await cli('encode', '--codebook', p('plain.json'), '--image', p('held', 'ramp.png'), '--out', p('ramp.cwq'), '--payload', 'raw', '--resync', '2');
    await cli('decode', '--codebook', p('plain.json'), '--in', p('ramp.cwq'), '--out', p('ramp-studio.png'));
    const c = spawnSync(p('fw', 'decode_file'), [p('ramp.cwq'), p('ramp.pgm')], { encoding: 'utf8' });
    expect(c.status).toBe(0);
    const pgm = readFileSync(p('ramp.pgm'));
    const header = Buffer.from('P5\n21 13\n255\n');
    expect(pgm.subarray(0, header.length).toString("latin1")).toBe(header.toString("latin1"));
    const studio = await sharp(p('ramp-studio.png')).extractChannel(0).raw().toBuffer();
    expect(Array.from(pgm.subarray(header.length))).toEqual(Array.from(studio));
  });

  it('prints the rounding cost of a mean-removed table and its Q format', async () => {
    const r = await cli('export', '--codebook', p('mean.json'), '--target', 'c', '--out', p('fw-mean'), '--images', p('held'));
    expect(r.stderr).toBe('');
    // Residuals within ±7 fit int16 with 12 fraction bits: Q3.12.
    expect(r.stdout).toMatch(/^table: int16 Q3\.12\n/);
    expect(r.stdout).toMatch(/rounding cost on 1 images/);
    expect(r.stdout).toMatch(/\nall +\d+\.\d\d dB +\d+\.\d\d dB +-?\d+\.\d{4} +\d+\n/);
    expect(readFileSync(p('fw-mean', 'cw_codebook.h'), 'utf8')).toMatch(/#define CW_CB_FRACTION_BITS 12 [\s\S]*typedef int16_t cw_codeword_t;/);
  });

  it('refuses an unknown target, a missing one and an output that is a file, writing nothing', async () => {
    writeFileSync(p('a-file'), 'x');
    const before = readdirSync(dir).sort();
    const a = await cli('export', '--codebook', p('plain.json'), '--target', 'rust', '--out', p('fw2'));
    expect(a.stderr).toBe('cellwright: error: --target must be one of c, npy, got "rust"\n');
    const b = await cli('export', '--codebook', p('plain.json'), '--out', p('fw2'));
    expect(b.stderr).toBe('cellwright: error: "cellwright export" needs --target\n');
    const c = await cli('export', '--codebook', p('plain.json'), '--target', 'c', '--out', p('a-file'));
    expect(c.status).toBe(1);
    expect(c.stderr).toMatch(/cannot write the bundle to .*a-file: it is not a folder/);
    expect(readdirSync(dir).sort()).toEqual(before);
  });

  it('reads every image before making the folder, so a broken one leaves nothing behind', async () => {
    mkdirSync(p('broken'));
    writeFileSync(p('broken', 'cut.png'), readFileSync(p('held', 'ramp.png')).subarray(0, 40));
    const before = readdirSync(dir).sort();
    const r = await cli('export', '--codebook', p('plain.json'), '--target', 'c', '--out', p('fw3'), '--images', p('broken'));
    expect(r.status).toBe(1);
    expect(r.stdout).toBe('');
    expect(r.stderr.split('\n').filter(Boolean)).toHaveLength(1);
    expect(r.stderr).toMatch(/cut\.png/);
    expect(readdirSync(dir).sort()).toEqual(before);
  });
});
