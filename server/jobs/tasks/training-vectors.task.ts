// Pool-thread task: decodes a run's training images one at a time and samples its training vectors, off the request loop.
import { decodedImageBytes, loadImage, streamImagesToTrainingVectors, type TrainingImageSource } from '../../engine';
import { taskMemory, type TaskContext } from './task-context';

export interface TrainingVectorsInput {
  /**
   * Absolute paths of the originals, the names error messages should use for them, and their sizes as recorded at
   * upload: the sample is drawn from the sizes before any image is decoded.
   */
  files: { path: string; name: string; width: number; height: number }[];
  color: 'luma' | 'rgb';
  patch: { width: number; height: number };
  /** Step between patches in pixels; absent: the patch side. */
  stride?: number;
  /** Cap on the number of vectors, drawn at random with `seed` when the images hold more. */
  sample: number;
  seed: number;
  /** 0: none; else the block means are quantized with this many bits and removed, as the encoder will. */
  meanBits: number;
}

/**
 * Holds the vectors (charged to the task's budget, in shared memory) and one decoded image at a time (charged while
 * held): a run of thousands of images needs no more than its largest image on top of its vectors.
 * @returns vectors: N × (width·height·channels), row-major, in a SharedArrayBuffer — the calling thread gets the
 *          same memory, not a copy, and training reads it in place
 */
export default async function trainingVectors(input: TrainingVectorsInput, context?: TaskContext): Promise<Float32Array> {
  const memory = taskMemory(context);
  const sources: TrainingImageSource[] = input.files.map((file) => {
    const bytes = decodedImageBytes(file.width, file.height, input.color);
    return {
      name: file.name,
      width: file.width,
      height: file.height,
      async decode() {
        memory.charge(bytes, `decoding ${file.name} (${file.width}×${file.height} ${input.color})`);
        try {
          return await loadImage(file.path, input.color, file.name);
        } catch (err) {
          memory.release(bytes);
          throw err;
        }
      },
      release: () => memory.release(bytes),
    };
  });
  const { vectors } = await streamImagesToTrainingVectors(sources, {
    patch: input.patch,
    stride: input.stride,
    color: input.color,
    sample: input.sample,
    seed: input.seed,
    preprocessing: input.meanBits > 0 ? { kind: 'mean-removed', meanBits: input.meanBits } : { kind: 'none' },
    allocate: (length) => memory.float32(length, 'holding the training vectors', { shared: true }),
  });
  return vectors;
}
