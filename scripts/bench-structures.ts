// Benchmark of the structured codebooks (not a test): encoding throughput of tree search against full search at
// b = 8, the distortion each structure pays for its speed or table, and training time per structure, on seabed
// tiles generated here (no download). Run: node --import tsx scripts/bench-structures.ts; `npm run bench` runs it.
import { fileURLToPath } from 'node:url';
import {
  assignSync, encodeResidual, encodeTree, imagesToTrainingVectors, shutdownEngineWorkers, structureCost, train, trainResidual, trainTree, type PixelImage,
} from '../server/engine';
import { seabedSet } from '../server/seed/seabed-tiles';

const lumaOf = (tile: { width: number; height: number; rgb: Uint8Array }, name: string): PixelImage => {
  const pixels = new Float32Array(tile.width * tile.height);
  // BT.601 luma (ITU-R BT.601): 0.299 R + 0.587 G + 0.114 B.
  for (let p = 0; p < pixels.length; p += 1) pixels[p] = 0.299 * tile.rgb[3 * p] + 0.587 * tile.rgb[3 * p + 1] + 0.114 * tile.rgb[3 * p + 2];
  return { name, width: tile.width, height: tile.height, color: 'luma', channels: 1, pixels };
};

const psnr = (distances: Float64Array, d: number) => 10 * Math.log10((255 * 255) / (distances.reduce((s, x) => s + x, 0) / (distances.length * d)));

/** Blocks per second of `encode` over `blocks`, repeated until at least half a second has passed. */
function rate(blocks: number, encode: () => void): number {
  let runs = 0;
  const t0 = performance.now();
  do {
    encode();
    runs++;
  } while (performance.now() - t0 < 500);
  return (runs * blocks) / ((performance.now() - t0) / 1000);
}

const secs = (t0: number) => `${((performance.now() - t0) / 1000).toFixed(1)} s`;

export async function structuresBench(): Promise<void> {
  const images = seabedSet(7, 6, 256, 256).map((t, i) => lumaOf(t, `tile-${i}`));
  const [training, held] = [images.slice(0, 4), images.slice(4)];
  const lloyd = { maxIterations: 20, seed: 1 };
  for (const side of [4, 8]) {
    const d = side * side;
    const patch = { width: side, height: side };
    const { vectors } = imagesToTrainingVectors(training, { patch, stride: side / 2 });
    const blocks = imagesToTrainingVectors(held, { patch }).vectors;
    const n = blocks.length / d;
    console.log(`\nstructured codebooks (one thread; seabed tiles 256×256, luma, ${side}×${side} blocks, ${vectors.length / d} training vectors, ${n} held-out blocks)`);

    let t0 = performance.now();
    const full = (await train(vectors, d, { k: 256, init: 'split', ...lloyd, threads: 1 })).codebooks.at(-1)!;
    const fullTime = secs(t0);
    t0 = performance.now();
    const tree = await trainTree(vectors, d, { growth: { kind: 'balanced', depth: 8 }, ...lloyd });
    const treeTime = secs(t0);
    t0 = performance.now();
    const greedy = await trainTree(vectors, d, { growth: { kind: 'greedy', rate: 9 }, prune: { rate: 8 }, ...lloyd });
    const greedyTime = secs(t0);

    const fullCodes = assignSync(blocks, d, full.codewords);
    const treeCodes = encodeTree(tree.codewords, tree.structure, blocks, d);
    const fullRate = rate(n, () => assignSync(blocks, d, full.codewords));
    const treeRate = rate(n, () => encodeTree(tree.codewords, tree.structure, blocks, d));
    const fullCost = structureCost({ kind: 'full', size: 256 }, d);
    const treeCost = structureCost({ kind: 'tree', leaves: 256, depth: 8 }, d);
    console.log(`  b = 8 full search: ${(fullRate / 1e3).toFixed(0)} k blocks/s (WebAssembly, exact), ${fullCost.encodeMultiplyAdds} multiply-adds a block, ` +
      `held-out PSNR ${psnr(fullCodes.distances, d).toFixed(2)} dB; trained in ${fullTime}`);
    console.log(`  b = 8 balanced tree: ${(treeRate / 1e3).toFixed(0)} k blocks/s (JavaScript float64 descent), ${treeCost.encodeMultiplyAdds} multiply-adds a block, ` +
      `held-out PSNR ${psnr(treeCodes.distances, d).toFixed(2)} dB (training: tree ${psnr(Float64Array.of(tree.treeDistortion * d), d).toFixed(2)} dB, ` +
      `full search over its leaves ${psnr(Float64Array.of(tree.fullSearchDistortion * d), d).toFixed(2)} dB); trained in ${treeTime}`);
    const greedyHeld = encodeTree(greedy.codewords, greedy.structure, blocks, d);
    const heldBits = greedyHeld.lengths.reduce((s, l) => s + l, 0) / n;
    console.log(`  greedy tree pruned to 8 bits: ${greedy.leaves} leaves, depth ${greedy.depth}, training rate ${greedy.rate.toFixed(3)} bits, held-out rate ${heldBits.toFixed(3)} bits, ` +
      `held-out PSNR ${psnr(greedyHeld.distances, d).toFixed(2)} dB; trained in ${greedyTime}`);

    for (const [bits, m] of [[[4, 4], 1], [[4, 4], 8], [[6, 6], 1], [[6, 6], 8], [[4, 4, 4], 8]] as const) {
      t0 = performance.now();
      const r = await trainResidual(vectors, d, { bits: [...bits], search: m === 1 ? { kind: 'greedy' } : { kind: 'm-best', m }, refinementPasses: 1, ...lloyd, threads: 1 });
      const time = secs(t0);
      const codes = encodeResidual(r.codewords, r.structure, blocks, d);
      const encodeRate = rate(n, () => encodeResidual(r.codewords, r.structure, blocks, d));
      const cost = structureCost({ kind: 'residual', bits, m }, d);
      const total = bits.reduce((a, b) => a + b, 0);
      console.log(`  residual ${bits.join('+')} bits, ${m === 1 ? 'greedy' : `M = ${m}`}: table ${r.tableCodewords} codewords (full search at ${total} bits: ${2 ** total}), ` +
        `${(encodeRate / 1e3).toFixed(0)} k blocks/s, ${cost.encodeMultiplyAdds} multiply-adds a block, held-out PSNR ${psnr(codes.distances, d).toFixed(2)} dB; trained in ${time}`);
    }
  }
}

if (process.argv[1] === fileURLToPath(import.meta.url)) {
  structuresBench()
    .catch((err) => {
      process.stderr.write(`bench-structures: ${err instanceof Error ? err.message : String(err)}\n`);
      process.exitCode = 1;
    })
    .finally(() => shutdownEngineWorkers());
}
