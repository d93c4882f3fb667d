// Codec figures of `npm run bench` (not a test): the command line's whole `encode` and `decode` of a 4096×4096 PNG net of
// process start-up, the decoder's table lookup alone, and the evaluation of a sweep (six codebooks × a held-out set).
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { decode, decodeOnThreads, threadBudget, encodePng, evaluate, imagesToTrainingVectors, INIT, loadImage, serializeCodebook, trainCodebooks, type Codebook, type PixelImage } from '../server/engine';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const cli = path.join(root, 'scripts', 'cellwright.mjs');
const imageDir = path.join(root, 'data', 'test-images'); // fetched by bench.ts before this runs
const SIDE = 4096;
const RUNS = 3;
const TARGET_CLI_ENCODE = 60; // Mpx/s, net of start-up
const TARGET_DECODE = 1000; // Mpx/s on two threads
const HELD_OUT = ['gravel.png', 'chelsea.png'];
const TRAINING = ['brick.png', 'grass.png', 'coffee.png'];

const median = (xs: number[]) => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) / 2] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
};

function timeCommand(args: string[]): number {
  const times: number[] = [];
  for (let i = 0; i < RUNS; i++) {
    const t = performance.now();
    const r = spawnSync(process.execPath, [cli, ...args], { encoding: 'utf8' });
    if (r.status !== 0) throw new Error(`cellwright ${args[0]} failed: ${r.stderr.trim().split('\n').pop()}`);
    times.push((performance.now() - t) / 1000);
  }
  return median(times);
}

/** 8×8 luma patches of the training images, and codebooks of 2^1..2^8 codewords from one splitting pass. */
async function ladder(training: PixelImage[]): Promise<Codebook[]> {
  const patch = { width: 8, height: 8, channels: 1 as const, color: 'luma' as const };
  const { vectors, dimension } = imagesToTrainingVectors(training, { patch: { width: 8, height: 8 }, stride: 4 });
  return trainCodebooks(vectors, dimension, { bits: 8, init: INIT.split, maxIterations: 20, seed: 1, patch, preprocessing: { kind: 'none' }, source: 'bench' });
}

/** A SIDE × SIDE luma image tiled from the held-out images (so it has real texture), as PNG. */
async function bigImage(heldOut: PixelImage[]): Promise<Buffer> {
  const out = new Uint8Array(SIDE * SIDE);
  for (let y = 0; y < SIDE; y++) {
    for (let x = 0; x < SIDE; x++) {
      const im = heldOut[(Math.floor(y / 512) + Math.floor(x / 512)) % heldOut.length];
      out[y * SIDE + x] = im.pixels[(y % im.height) * im.width + (x % im.width)];
    }
  }
  return encodePng(out, SIDE, SIDE, 1);
}

export async function codecFigures(): Promise<void> {
  const load = (f: string) => loadImage(path.join(imageDir, f), 'luma', f);
  const training = await Promise.all(TRAINING.map(load));
  const heldOut = await Promise.all(HELD_OUT.map(load));
  const books = await ladder(training);
  const book = books[books.length - 1];
  const dir = mkdtempSync(path.join(os.tmpdir(), 'cw-bench-codec-'));
  try {
    const cb = path.join(dir, 'codebook.json');
    const png = path.join(dir, 'big.png');
    const coded = path.join(dir, 'big.cwvq');
    writeFileSync(cb, serializeCodebook(book));
    writeFileSync(png, await bigImage(heldOut));
    const mpx = (SIDE * SIDE) / 1e6;
    const startup = timeCommand(['--help']);
    const enc = timeCommand(['encode', '--codebook', cb, '--image', png, '--out', coded]);
    const dec = timeCommand(['decode', '--codebook', cb, '--in', coded, '--out', path.join(dir, 'back.png')]);
    const encRate = mpx / (enc - startup);
    console.log(`\ncommand line, ${SIDE}×${SIDE} luma PNG, 8×8, K=${book.size} (median of ${RUNS}; start-up ${startup.toFixed(2)} s subtracted):`);
    console.log(`  encode ${enc.toFixed(2)} s → ${encRate.toFixed(1)} Mpx/s net (target ≥ ${TARGET_CLI_ENCODE} Mpx/s: ${encRate >= TARGET_CLI_ENCODE ? 'met' : 'NOT met'})`);
    console.log(`  decode ${dec.toFixed(2)} s → ${(mpx / (dec - startup)).toFixed(1)} Mpx/s net (PNG writing included)`);

    // The decoder alone (container parsed, indices unpacked, blocks copied), in this process: on one thread, then
    // on two (this thread and one engine worker writing bands of block rows into one shared image).
    const bytes = readFileSync(coded);
    // Decoding takes only free threads; the previous run's worker holds its thread until its reply is read.
    const idle = async () => {
      while (threadBudget.available < threadBudget.total) await new Promise((resolve) => setTimeout(resolve, 1));
    };
    const oneThread = decode(book, bytes).pixels;
    await idle();
    const twoThreads = (await decodeOnThreads(book, bytes, { threads: 2 })).pixels;
    if (Buffer.compare(Buffer.from(oneThread), Buffer.from(twoThreads.buffer, twoThreads.byteOffset, twoThreads.byteLength)) !== 0) {
      throw new Error('two-thread decode differs from the one-thread decode');
    }
    const one: number[] = [];
    const two: number[] = [];
    for (let i = 0; i < 7; i++) {
      let t = performance.now();
      decode(book, bytes);
      one.push((performance.now() - t) / 1000);
      await idle();
      t = performance.now();
      await decodeOnThreads(book, bytes, { threads: 2 });
      two.push((performance.now() - t) / 1000);
    }
    const oneRate = mpx / median(one);
    const twoRate = mpx / median(two);
    console.log(`  decode in-process (container to pixels): one thread ${oneRate.toFixed(0)} Mpx/s, two threads ${twoRate.toFixed(0)} Mpx/s (${(twoRate / oneRate).toFixed(2)}×; target ≥ ${TARGET_DECODE} Mpx/s on two threads: ${twoRate >= TARGET_DECODE ? 'met' : 'NOT met'})`);

    // A sweep's evaluation: codebooks of 2^3..2^8 codewords on the held-out images (baselines are not part of it).
    const six = books.filter((b) => b.size >= 8);
    const t = performance.now();
    for (const b of six) await evaluate(b, heldOut);
    const pixels = heldOut.reduce((s, im) => s + im.width * im.height, 0);
    console.log(`  evaluation of a sweep (${six.length} codebooks × ${heldOut.length} held-out images, ${(pixels / 1e6).toFixed(2)} Mpx): ${((performance.now() - t) / 1000).toFixed(2)} s`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
