import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decodedImageBytes, imagesToTrainingVectors, loadImage } from '../../../server/engine';
import trainingVectors, { type TrainingVectorsInput } from '../../../server/jobs/tasks/training-vectors.task';
import { seabedSet } from '../../../server/seed/seabed-tiles';

let dir: string;
let files: TrainingVectorsInput['files'];
const sizes: [number, number][] = [[96, 64], [160, 120], [64, 64], [120, 90]];

beforeAll(async () => {
  dir = mkdtempSync(path.join(tmpdir(), 'cw-training-task-'));
  files = [];
  for (const [i, [w, h]] of sizes.entries()) {
    const [tile] = seabedSet(40 + i, 1, w, h);
    const file = path.join(dir, `tile-${i}.png`);
    writeFileSync(file, await sharp(Buffer.from(tile.rgb), { raw: { width: w, height: h, channels: 3 } }).png().toBuffer());
    files.push({ path: file, name: `tile-${i}.png`, width: w, height: h });
  }
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const input = (sample: number): TrainingVectorsInput => ({ files, color: 'rgb', patch: { width: 4, height: 4 }, sample, seed: 9, meanBits: 4 });
const dimension = 4 * 4 * 3;

describe('training-vectors task', () => {
  it('gives the vectors of decoding every image first, in shared memory', async () => {
    const images = [];
    for (const f of files) images.push(await loadImage(f.path, 'rgb', f.name));
    const eager = imagesToTrainingVectors(images, { patch: { width: 4, height: 4 }, sample: 700, seed: 9, preprocessing: { kind: 'mean-removed', meanBits: 4 } });
    const vectors = await trainingVectors(input(700), { memoryLimitBytes: null });
    expect(vectors.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(Array.from(vectors)).toEqual(Array.from(eager.vectors));
  });

  it('runs within the vectors plus its largest decoded image, less than all images decoded together', async () => {
    const largest = Math.max(...sizes.map(([w, h]) => decodedImageBytes(w, h, 'rgb')));
    const all = sizes.reduce((n, [w, h]) => n + decodedImageBytes(w, h, 'rgb'), 0);
    const limit = 700 * dimension * 4 + largest;
    expect(limit).toBeLessThan(700 * dimension * 4 + all);
    const vectors = await trainingVectors(input(700), { memoryLimitBytes: limit });
    expect(vectors.length).toBe(700 * dimension);
  });

  it('fails with the figures when the vectors and one image do not fit the task limit', async () => {
    const largest = Math.max(...sizes.map(([w, h]) => decodedImageBytes(w, h, 'rgb')));
    const limit = 700 * dimension * 4 + largest - 1;
    // Held when the largest image (the second) is due: the vectors (700 × 48 × 4 = 134 400 bytes) and nothing of the
    // first image, which was given back once its vectors were taken.
    await expect(trainingVectors(input(700), { memoryLimitBytes: limit })).rejects.toThrow(
      'decoding tile-1.png (160×120 rgb) needs 281 KiB (288000 bytes), but this job task (JOB_TASK_MAX_HEAP_MB) may hold 412 KiB and already holds 131 KiB',
    );
  });
});
