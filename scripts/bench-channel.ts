// Benchmark of channel errors (not a test): channel simulations per second (a held-out tile's raw payload flipped,
// decoded and measured) and the closed form's cost per rate, and index assignment by binary switching at K = 64 and
// 256 (K = 1024 only with --large: it took minutes on the development machine). Seabed tiles generated here (no
// download). Run: node --import tsx scripts/bench-channel.ts [--large]; `npm run bench` runs it at its end.
import { fileURLToPath } from 'node:url';
import { channelCurve, imagesToTrainingVectors, reorderCodebook, shutdownEngineWorkers, trainCodebooks, type PixelImage } from '../server/engine';
import { seabedSet } from '../server/seed/seabed-tiles';

const lumaOf = (tile: { width: number; height: number; rgb: Uint8Array }, name: string): PixelImage => {
  const pixels = new Float32Array(tile.width * tile.height);
  // BT.601 luma (ITU-R BT.601): 0.299 R + 0.587 G + 0.114 B.
  for (let p = 0; p < pixels.length; p += 1) pixels[p] = 0.299 * tile.rgb[3 * p] + 0.587 * tile.rgb[3 * p + 1] + 0.114 * tile.rgb[3 * p + 2];
  return { name, width: tile.width, height: tile.height, color: 'luma', channels: 1, pixels };
};

export async function channelBench(options: { large?: boolean } = {}): Promise<void> {
  const images = seabedSet(7, 5, 256, 256).map((t, i) => lumaOf(t, `tile-${i}`));
  const [train, held] = [images.slice(0, 4), images.slice(4)];
  const patch = { width: 4, height: 4 };
  const { vectors } = imagesToTrainingVectors(train, { patch, stride: 2 });
  console.log('\nchannel errors (one thread; seabed tiles 256×256, luma, 4×4 patches)');
  for (const bits of options.large ? [6, 8, 10] : [6, 8]) {
    const books = await trainCodebooks(vectors, 16, { bits, init: 'kmeans++', maxIterations: 10, patch: { ...patch, channels: 1, color: 'luma' }, preprocessing: { kind: 'none' }, source: 'bench', stride: 2 });
    const book = books[books.length - 1];
    const seeds = 8;
    const t0 = performance.now();
    const curve = await channelCurve(book, held, { bers: [1e-3, 1e-2], seeds, threads: 1 });
    const secs = (performance.now() - t0) / 1000;
    const t1 = performance.now();
    const r = reorderCodebook(book, { ber: 1e-2 });
    const reorderSecs = (performance.now() - t1) / 1000;
    const psnr = curve.points.map((p) => `${p.ber}: ${p.psnr.toFixed(2)} dB measured, ${p.expectedPsnr?.toFixed(2)} dB expected`).join('; ');
    console.log(
      `  K=${book.size}: ${((2 * seeds) / secs).toFixed(1)} simulations/s with the closed form (${psnr}); ` +
        `reorder at 1e-2 ${reorderSecs.toFixed(2)} s, channel distortion ${r.before.toFixed(2)} → ${r.after.toFixed(2)} (${r.swaps} switches)`,
    );
  }
}

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  channelBench({ large: process.argv.includes('--large') })
    .then(() => shutdownEngineWorkers())
    .catch((error: unknown) => {
      console.error(error);
      process.exitCode = 1;
    });
}
