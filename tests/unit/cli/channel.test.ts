// cellwright channel and cellwright reorder: JSON reports, the files they write, one error line on bad input.
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../../server/cli/main';
import type { CliContext } from '../../../server/cli/context';
import { encode, loadImage, parseCodebookJson, serializeCodebook, shutdownEngineWorkers } from '../../../server/engine';
import { madeUpCodebook } from '../channel/fixtures';

let dir: string;
const p = (...parts: string[]) => join(dir, ...parts);

async function cli(...argv: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  const status = await main(argv, ctx);
  return { status, stdout, stderr };
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-channel-'));
  mkdirSync(p('held'));
  writeFileSync(p('book.json'), serializeCodebook(madeUpCodebook({ size: 32, w: 2, h: 2, usage: 'random' })));
  const ramp = Buffer.alloc(30 * 22);
  for (let i = 0; i < ramp.length; i += 1) ramp[i] = ((i % 30) * 7 + Math.floor(i / 30) * 9) % 256;
  await sharp(ramp, { raw: { width: 30, height: 22, channels: 1 } }).png().toFile(p('held', 'ramp.png'));
});

afterAll(async () => {
  rmSync(dir, { recursive: true, force: true });
  await shutdownEngineWorkers();
});

describe('cellwright channel', () => {
  it('reports measured and expected PSNR for each rate, falling as the rate rises', async () => {
    const r = await cli('channel', '--codebook', p('book.json'), '--images', p('held'), '--ber', '1e-4,1e-2,0.2', '--seeds', '3', '--json');
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    const report = JSON.parse(r.stdout);
    expect(report).toMatchObject({ command: 'channel', images: 1, seeds: 3, resyncRows: 0, expectedNote: null });
    // 15 × 11 blocks of 5 bits: 825 bits, 104 bytes.
    expect(report.payloadBytes).toBe(104);
    expect(report.points.map((q: { ber: number }) => q.ber)).toEqual([1e-4, 1e-2, 0.2]);
    expect(report.points[0].psnr).toBeGreaterThan(report.points[2].psnr);
    expect(report.points[0].expectedPsnr).toBeGreaterThan(report.points[2].expectedPsnr);
  });

  it('prints a table without --json and counts the markers\' bytes with --resync', async () => {
    const r = await cli('channel', '--codebook', p('book.json'), '--images', p('held'), '--ber', '0.01', '--seeds', '1', '--resync', '2');
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/PSNR measured/);
    // 11 block rows in segments of 2: 5 markers of 4 bytes; each segment's 15 × 2 × 5 bits round up to 19 bytes, the last (15 × 5 bits) to 10.
    expect(r.stdout).toMatch(/^1 images, 125 payload bytes/);
  });

  it('answers bad input with one error line', async () => {
    for (const args of [['--ber', '0.7'], ['--ber', 'x'], ['--seeds', '0'], ['--resync', '300']]) {
      const r = await cli('channel', '--codebook', p('book.json'), '--images', p('held'), ...args);
      expect(r.status).toBe(2);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(r.stderr).toMatch(/^cellwright: error: --/);
    }
    const missing = await cli('channel', '--codebook', p('nothing.json'), '--images', p('held'));
    expect(missing.status).toBe(1);
    expect(missing.stderr.trim().split('\n')).toHaveLength(1);
  });
});

describe('cellwright reorder', () => {
  it('writes a reordered codebook with the same noiseless results and reports the distortion before and after', async () => {
    const r = await cli('reorder', '--codebook', p('book.json'), '--out', p('reordered.json'), '--ber', '0.01', '--json');
    expect(r.stderr).toBe('');
    const report = JSON.parse(r.stdout);
    expect(report.channelDistortionAfter).toBeLessThan(report.channelDistortionBefore);
    const before = parseCodebookJson(readFileSync(p('book.json'), 'utf8'));
    const after = parseCodebookJson(readFileSync(p('reordered.json'), 'utf8'));
    expect(after.checksum).toBe(report.checksum);
    const image = await loadImage(p('held', 'ramp.png'), 'luma');
    expect((await encode(after, image)).reconstruction).toEqual((await encode(before, image)).reconstruction);
    const text = await cli('reorder', '--codebook', p('book.json'), '--out', p('again.json'));
    expect(text.stdout).toMatch(/expected channel distortion at BER 0.01: .* → .* per component/);
  });

  it('answers a bad rate with one error line and writes nothing', async () => {
    const r = await cli('reorder', '--codebook', p('book.json'), '--out', p('bad.json'), '--ber', '2');
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/^cellwright: error: --ber must be a number from 1e-9 to 0.5, got "2"\n$/);
    expect(existsSync(p('bad.json'))).toBe(false);
  });
});
