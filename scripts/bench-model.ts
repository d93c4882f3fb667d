// Benchmark of the codebook model (not a test): blocks scored per second (negative log-likelihood and nearest
// distance over every codeword, float64, one thread) and megapixels denoised per second at patch step 1 by both
// estimators, on seabed tiles generated here (no download). Run: node --import tsx scripts/bench-model.ts; `npm run
// bench` runs it at its end.
import { fileURLToPath } from 'node:url';
import {
  addNoise, codebookMixture, codebookTrainingVectors, denoise, imagesToTrainingVectors, scoreVectors, shutdownEngineWorkers, trainCodebooks, type PixelImage,
} from '../server/engine';
import { seabedSet } from '../server/seed/seabed-tiles';

const lumaOf = (tile: { width: number; height: number; rgb: Uint8Array }, name: string): PixelImage => {
  const pixels = new Float32Array(tile.width * tile.height);
  // BT.601 luma (ITU-R BT.601): 0.299 R + 0.587 G + 0.114 B.
  for (let p = 0; p < pixels.length; p += 1) pixels[p] = 0.299 * tile.rgb[3 * p] + 0.587 * tile.rgb[3 * p + 1] + 0.114 * tile.rgb[3 * p + 2];
  return { name, width: tile.width, height: tile.height, color: 'luma', channels: 1, pixels };
};

export async function modelBench(): Promise<void> {
  const images = seabedSet(5, 6, 256, 256).map((t, i) => lumaOf(t, `tile-${i}`));
  const [train, held] = [images.slice(0, 4), images.slice(4)];
  console.log('\ncodebook model (one thread; seabed tiles 256×256, luma, 4×4 patches)');
  for (const bits of [6, 8]) {
    const patch = { width: 4, height: 4 };
    const { vectors } = imagesToTrainingVectors(train, { patch, stride: 2 });
    const books = await trainCodebooks(vectors, 16, { bits, init: 'kmeans++', maxIterations: 20, patch: { ...patch, channels: 1, color: 'luma' }, preprocessing: { kind: 'none' }, source: 'bench', stride: 2 });
    const book = books[books.length - 1];
    const mixture = codebookMixture(book, { trainingVectors: codebookTrainingVectors(book, train) });
    const blocks = imagesToTrainingVectors(held, { patch }).vectors;
    const t0 = performance.now();
    scoreVectors(mixture, blocks);
    const scoreSecs = (performance.now() - t0) / 1000;
    const noisy = addNoise(held[0], 20, 1);
    const mpx = (noisy.width * noisy.height) / 1e6;
    const rates: string[] = [];
    for (const estimator of ['hard', 'mean'] as const) {
      const t1 = performance.now();
      denoise(book, mixture, noisy, { sigma: 20, estimator, step: 1 });
      rates.push(`${estimator} ${(mpx / ((performance.now() - t1) / 1000)).toFixed(3)} Mpx/s`);
    }
    const n = blocks.length / 16;
    console.log(`  K=${book.size}: scores ${Math.round(n / scoreSecs).toLocaleString('en')} blocks/s (${n} blocks); denoising at step 1: ${rates.join(', ')}`);
  }
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  modelBench()
    .then(() => shutdownEngineWorkers())
    .catch((error: unknown) => {
      console.error(error);
      process.exitCode = 1;
    });
}
