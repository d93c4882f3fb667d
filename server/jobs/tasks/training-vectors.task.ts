// Pool-thread task: decodes a run's training images and extracts its training vectors, off the request loop.
import { Piscina } from 'piscina';
import { imagesToTrainingVectors, loadImage, type PixelImage } from '../../engine';

export interface TrainingVectorsInput {
  /** Absolute paths of the originals, and the names error messages should use for them. */
  files: { path: string; name: string }[];
  color: 'luma' | 'rgb';
  patch: { width: number; height: number };
  /** Cap on the number of vectors, drawn at random with `seed` when the images hold more. */
  sample: number;
  seed: number;
  /** 0: none; else the block means are quantized with this many bits and removed, as the encoder will. */
  meanBits: number;
}

/** @returns vectors: N × (width·height·channels), row-major */
export default async function trainingVectors(input: TrainingVectorsInput): Promise<Float32Array> {
  const images: PixelImage[] = [];
  for (const file of input.files) images.push(await loadImage(file.path, input.color, file.name));
  const { vectors } = imagesToTrainingVectors(images, {
    patch: input.patch,
    sample: input.sample,
    seed: input.seed,
    preprocessing: input.meanBits > 0 ? { kind: 'mean-removed', meanBits: input.meanBits } : { kind: 'none' },
  });
  // Moved to the calling thread, not copied: the vectors can be hundreds of megabytes.
  return Piscina.move(vectors) as Float32Array;
}
