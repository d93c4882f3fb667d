import { mkdirSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../../server/cli/context';
import { main } from '../../../server/cli/main';
import {
  evaluate, loadImage, parseCodebookJson, poolSsim, psnrForJson, psnrFromMse, shutdownEngineWorkers, type PixelImage,
} from '../../../server/engine';

/**
 * The studio's evaluation task (server/jobs/tasks/evaluate.task.ts, evaluateCodebook) decodes each stored original
 * with the engine's loadImage, measures the set with evaluate() on one thread and stores `overall` with PSNR through
 * psnrForJson. This file calls those engine functions the same way and compares with what `cellwright eval --json`
 * prints for the same codebook file and images.
 */

let dir: string;
const p = (...parts: string[]) => join(dir, ...parts);
const HELD_OUT = ['a.png', 'b.png', 'tiny.png'];

async function cli(...argv: string[]): Promise<{ status: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  return { status: await main(argv, ctx), stdout, stderr };
}

async function writePng(path: string, width: number, height: number, phase: number): Promise<void> {
  const buf = Buffer.alloc(width * height * 3);
  for (let i = 0; i < buf.length; i += 1) {
    const x = Math.floor(i / 3) % width;
    const y = Math.floor(i / 3 / width);
    buf[i] = Math.max(0, Math.min(255, Math.round(128 + 100 * Math.sin((x + phase) / (4 + (i % 3))) * Math.cos((y * (1 + phase)) / 9))));
  }
  await sharp(buf, { raw: { width, height, channels: 3 } }).png().toFile(path);
}

/** What the studio's evaluation task computes for a codebook file and images, by the same engine calls. */
async function studioFigures(codebookPath: string, imagePaths: string[]) {
  const book = parseCodebookJson(readFileSync(codebookPath, 'utf8'));
  const decoded: PixelImage[] = [];
  for (const path of imagePaths) decoded.push(await loadImage(path, book.patch!.color, path));
  const result = await evaluate(book, decoded, { threads: 1 });
  return { result, decoded, overall: { ...result.overall, psnr: psnrForJson(result.overall.psnr) } };
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-cli-studio-'));
  mkdirSync(p('train'));
  mkdirSync(p('held'));
  await writePng(p('train', 't1.png'), 64, 40, 0);
  await writePng(p('train', 't2.png'), 36, 36, 3);
  // Held-out images of different sizes, one below the 11-pixel SSIM window, so pixel weighting and the SSIM
  // exclusion both matter to the pooled figures.
  await writePng(p('held', 'a.png'), 60, 44, 7);
  await writePng(p('held', 'b.png'), 20, 16, 1);
  await writePng(p('held', 'tiny.png'), 9, 8, 5);
  const trained = await cli('train', '--images', p('train'), '--patch', '4x4', '--color', 'rgb', '--bits', '5', '--seed', '11', '--out', p('cb.json'));
  expect(trained.stderr).toBe('');
});

afterAll(async () => {
  await shutdownEngineWorkers();
  rmSync(dir, { recursive: true, force: true });
});

describe('cellwright eval --json against the studio', () => {
  it('reports the pooled MSE, PSNR and SSIM the studio stores for the same codebook and images', async () => {
    const r = await cli('eval', '--codebook', p('cb.json'), '--images', p('held'), '--json');
    expect(r.stderr).toBe('');
    const json = JSON.parse(r.stdout);
    const studio = await studioFigures(p('cb.json'), HELD_OUT.map((f) => p('held', f)));
    expect({ mse: json.mse, psnr: json.psnr, ssim: json.ssim }).toEqual({ mse: studio.overall.mse, psnr: studio.overall.psnr, ssim: studio.overall.ssim });
    expect([json.bppFixed, json.bppEntropy, json.bppActual, json.bytes]).toEqual([
      studio.overall.bppFixed, studio.overall.bppEntropy, studio.overall.bppActual, studio.overall.bytes,
    ]);
    json.perImage.forEach((m: { mse: number; psnr: number | null; ssim: number | null }, i: number) => {
      const s = studio.result.images[i];
      expect({ mse: m.mse, psnr: m.psnr, ssim: m.ssim }).toEqual({ mse: s.mse, psnr: psnrForJson(s.psnr), ssim: s.ssim });
    });
  });

  it('pools as the studio rule says: squared errors over all components, SSIM by poolSsim, and the fixture tells the rules apart', async () => {
    const json = JSON.parse((await cli('eval', '--codebook', p('cb.json'), '--images', p('held'), '--json')).stdout);
    const { result, decoded } = await studioFigures(p('cb.json'), HELD_OUT.map((f) => p('held', f)));
    const components = decoded.map((d) => d.pixels.length);
    const pooledMse = result.images.reduce((s, m, i) => s + m.mse * components[i], 0) / components.reduce((a, b) => a + b, 0);
    expect(json.mse).toBeCloseTo(pooledMse, 12);
    expect(json.psnr).toBeCloseTo(psnrFromMse(pooledMse), 12);
    expect(json.ssim).toBe(poolSsim(result.images));
    // The tiny image has no SSIM and is left out of the pool.
    expect(json.perImage.map((m: { ssim: number | null }) => m.ssim === null)).toEqual([false, false, true]);
    // A plain mean over images would differ here, so a change of pooling rule on either side fails the test above.
    const plainMse = result.images.reduce((s, m) => s + m.mse, 0) / result.images.length;
    const withSsim = result.images.filter((m) => m.ssim !== null);
    const plainSsim = withSsim.reduce((s, m) => s + m.ssim!, 0) / withSsim.length;
    expect(Math.abs(plainMse - json.mse)).toBeGreaterThan(1e-6);
    expect(Math.abs(plainSsim - json.ssim)).toBeGreaterThan(1e-6);
  });
});
