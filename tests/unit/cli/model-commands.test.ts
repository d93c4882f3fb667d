// `cellwright anomaly` and `cellwright denoise`: the codebook read as a density of its training patches, from the shell.
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../../server/cli/context';
import { main } from '../../../server/cli/main';
import { MODEL_CAUTION, shutdownEngineWorkers } from '../../../server/engine';

let dir: string;
const p = (...parts: string[]) => join(dir, ...parts);

async function cli(...argv: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  const status = await main(argv, ctx);
  return { status, stdout, stderr };
}

function expectOneErrorLine(r: { status: number; stdout: string; stderr: string }, status: number, pattern: RegExp) {
  expect(r.status).toBe(status);
  expect(r.stdout).toBe('');
  const lines = r.stderr.split('\n').filter(Boolean);
  expect(lines, r.stderr).toHaveLength(1);
  expect(lines[0]).toMatch(/^cellwright: error: /);
  expect(lines[0]).toMatch(pattern);
}

// The bright square of the held-out image: 12×12 pixels at (20, 16), so 9 whole 4×4 blocks.
const inSquare = (x: number, y: number) => x >= 20 && x < 32 && y >= 16 && y < 28;

/** A smooth grey texture (seeded phase) as a PNG; with `square`, the bright square pasted in. */
async function writeTexture(path: string, seed: number, width: number, height: number, square = false): Promise<void> {
  const buf = Buffer.alloc(width * height);
  for (let y = 0; y < height; y += 1) {
    for (let x = 0; x < width; x += 1) {
      const v = 128 + 50 * Math.sin((x + 3 * seed) / 6) * Math.cos((y - seed) / 8) + 20 * Math.sin((x + y + seed) / 3.1);
      buf[y * width + x] = square && inSquare(x, y) ? 250 : Math.round(v);
    }
  }
  await sharp(buf, { raw: { width, height, channels: 1 } }).png().toFile(path);
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-cli-model-'));
  for (const d of ['train', 'held', 'out', 'elsewhere']) mkdirSync(p(d));
  for (const seed of [1, 2, 3]) await writeTexture(p('train', `t${seed}.png`), seed, 64, 64);
  await writeTexture(p('held', 'square.png'), 9, 48, 48, true);
  await writeTexture(p('held', 'plain.png'), 11, 40, 32);
  const trained = await cli('train', '--images', p('train'), '--patch', '4x4', '--bits', '5', '--init', 'kmeans++', '--stride', '2', '--out', p('cb.json'));
  expect(trained.status, trained.stderr).toBe(0);
  // The same codebook, recording a source that is no folder here.
  const doc = JSON.parse(readFileSync(p('cb.json'), 'utf8'));
  writeFileSync(p('moved.json'), JSON.stringify({ ...doc, training: { ...doc.training, source: p('no-such-folder') } }));
});

afterAll(async () => {
  await shutdownEngineWorkers();
  rmSync(dir, { recursive: true, force: true });
});

describe('cellwright anomaly', () => {
  it('flags the blocks of a pasted bright square with their top-left pixel and scores, at the stated training rate', async () => {
    const r = await cli('anomaly', '--codebook', p('cb.json'), '--images', p('held'), '--rate', '0.001', '--json');
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    const json = JSON.parse(r.stdout);
    expect(json).toMatchObject({ command: 'anomaly', rate: 0.001, score: 'nll', varianceSource: 'training-vectors' });
    // The codebook's recorded source folder gave the training patches again: stride 2 over three 64×64 images.
    expect(json.trainingBlocks).toBe(3 * 31 * 31);
    expect(Math.abs(json.flaggedTrainingBlocks.nll - 0.001 * json.trainingBlocks)).toBeLessThanOrEqual(1);
    const square = json.images.find((i: { name: string }) => i.name.endsWith('square.png'));
    expect(square).toMatchObject({ width: 48, height: 48, blockWidth: 4, blockHeight: 4, blocks: 144 });
    for (const b of square.flagged) {
      expect(Object.keys(b).sort()).toEqual(['distance', 'nearest', 'nll', 'x', 'y']);
      expect(b.x % 4 === 0 && b.y % 4 === 0).toBe(true);
      expect(b.nll).toBeGreaterThan(json.thresholds.nll);
    }
    // Every block of the square is flagged.
    expect(square.flagged.filter((b: { x: number; y: number }) => inSquare(b.x, b.y))).toHaveLength(9);
    // The ranked list over the set (default 10) opens with the square's 9 blocks.
    expect(json.top).toHaveLength(10);
    for (const b of json.top.slice(0, 9)) expect(b.image.endsWith('square.png') && inSquare(b.x, b.y)).toBe(true);
  });

  it('writes a heat map the size of the image, and one per image for a folder of several', async () => {
    const one = await cli('anomaly', '--codebook', p('cb.json'), '--images', p('held', 'square.png'), '--map', p('out', 'map.png'));
    expect(one.status, one.stderr).toBe(0);
    expect(one.stdout).toMatch(/^Caution: /m);
    const meta = await sharp(p('out', 'map.png')).metadata();
    expect([meta.width, meta.height, meta.channels]).toEqual([48, 48, 3]);
    // A flagged block is outlined in cyan; a block far from the square is left without an outline.
    const { data } = await sharp(p('out', 'map.png')).raw().toBuffer({ resolveWithObject: true });
    const at = (x: number, y: number) => Array.from(data.subarray((y * 48 + x) * 3, (y * 48 + x) * 3 + 3));
    expect(at(24, 20)).toEqual([0, 255, 255]);
    expect(at(0, 44)).not.toEqual([0, 255, 255]);
    const many = await cli('anomaly', '--codebook', p('cb.json'), '--images', p('held'), '--map', p('out', 'set.png'), '--json');
    expect(many.status, many.stderr).toBe(0);
    expect(readdirSync(p('out')).filter((f) => f.startsWith('set-')).sort()).toEqual(['set-plain.png', 'set-square.png']);
    expect(JSON.parse(many.stdout).images.map((i: { map: string }) => i.map)).toEqual([p('out', 'set-plain.png'), p('out', 'set-square.png')]);
  });

  it('asks for --training when the codebook\'s source is no folder here, and takes it when given', async () => {
    const missing = await cli('anomaly', '--codebook', p('moved.json'), '--images', p('held'), '--map', p('elsewhere', 'map.png'));
    expectOneErrorLine(missing, 1, /give its training images with --training DIR/);
    expect(readdirSync(p('elsewhere'))).toEqual([]);
    const given = await cli('anomaly', '--codebook', p('moved.json'), '--images', p('held'), '--training', p('train'), '--json');
    expect(given.status, given.stderr).toBe(0);
    expect(JSON.parse(given.stdout).trainingBlocks).toBe(3 * 31 * 31);
  });

  it('refuses a rate outside its range and an unknown score with one line and status 2', async () => {
    expectOneErrorLine(await cli('anomaly', '--codebook', p('cb.json'), '--images', p('held'), '--rate', '0.9'), 2, /--rate must be a number from 0.000001 to 0.5, got "0.9"/);
    expectOneErrorLine(await cli('anomaly', '--codebook', p('cb.json'), '--images', p('held'), '--score', 'odd'), 2, /--score must be one of nll, distance/);
    expectOneErrorLine(await cli('anomaly', '--codebook', p('cb.json')), 2, /needs --images/);
  });
});

describe('cellwright denoise', () => {
  it('adds seeded noise to a clean image, denoises it and reports both PSNRs against the clean image', async () => {
    const args = ['denoise', '--codebook', p('cb.json'), '--image', p('train', 't2.png'), '--add-noise', '20', '--seed', '4', '--json'];
    const r = await cli(...args, '--out', p('out', 'dn.png'), '--noisy', p('out', 'noisy.png'));
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    const json = JSON.parse(r.stdout);
    expect(json).toMatchObject({ command: 'denoise', estimator: 'mean', step: 1, sigma: 20, sigmaEstimated: false, seed: 4, width: 64, height: 64, patches: 61 * 61 });
    expect(json.psnrDenoised).toBeGreaterThan(json.psnrNoisy + 1);
    const meta = await sharp(p('out', 'dn.png')).metadata();
    expect([meta.width, meta.height]).toEqual([64, 64]);
    expect(existsSync(p('out', 'noisy.png'))).toBe(true);
    // The same seed gives the same noise, hence the same output.
    const again = await cli(...args, '--out', p('out', 'dn-again.png'));
    expect(readFileSync(p('out', 'dn-again.png')).equals(readFileSync(p('out', 'dn.png')))).toBe(true);
    expect(JSON.parse(again.stdout).psnrDenoised).toBe(json.psnrDenoised);
  });

  it('estimates σ from the image when none is given, and takes the hard estimator and a step', async () => {
    const r = await cli('denoise', '--codebook', p('cb.json'), '--image', p('out', 'noisy.png'), '--estimator', 'hard', '--step', '2', '--out', p('out', 'dn-hard.png'), '--json');
    expect(r.status, r.stderr).toBe(0);
    const json = JSON.parse(r.stdout);
    expect(json).toMatchObject({ estimator: 'hard', step: 2, sigmaEstimated: true, patches: 31 * 31 });
    expect(json.sigma).toBeGreaterThan(10);
    expect(json.psnrNoisy).toBeUndefined();
  });

  it('refuses --sigma with --add-noise, --seed without it and an unknown estimator, writing nothing', async () => {
    const base = ['denoise', '--codebook', p('cb.json'), '--image', p('train', 't1.png'), '--out', p('elsewhere', 'x.png')];
    expectOneErrorLine(await cli(...base, '--sigma', '5', '--add-noise', '5'), 2, /not both/);
    expectOneErrorLine(await cli(...base, '--seed', '3'), 2, /--seed applies to --add-noise/);
    expectOneErrorLine(await cli(...base, '--estimator', 'median'), 2, /--estimator must be one of hard, mean/);
    expectOneErrorLine(await cli(...base, '--sigma', '200'), 2, /--sigma must be a number from 0 to 128, got "200"/);
    expect(readdirSync(p('elsewhere'))).toEqual([]);
  });
});

describe('help', () => {
  it('lists both commands and carries the caution in each command\'s help', async () => {
    const overview = (await cli('--help')).stdout;
    expect(overview).toMatch(/^ {2}anomaly /m);
    expect(overview).toMatch(/^ {2}denoise /m);
    for (const command of ['anomaly', 'denoise']) {
      const help = (await cli(command, '--help')).stdout;
      expect(help).toMatch(new RegExp(`^Usage: cellwright ${command}`));
      expect(help).toContain(`Caution: ${MODEL_CAUTION}`);
    }
  });
});
