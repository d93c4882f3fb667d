import { stat } from 'node:fs/promises';
import type { Codebook, PixelImage } from '../engine';
import { CliInputError } from './cli-error';
import type { CliContext } from './context';
import { loadImageFile, loadImageFolder, trainingVectorsFromFolder } from './inputs';
import type { Progress } from './progress';

async function isFolder(path: string): Promise<boolean> {
  try {
    return (await stat(path)).isDirectory();
  } catch {
    return false;
  }
}

/**
 * The folder of the codebook's training images: --training when given, else the source the codebook records when that
 * is a folder here (what "cellwright train --images DIR" records), else none.
 */
export async function trainingFolder(given: string | undefined, book: Codebook): Promise<string | undefined> {
  if (given !== undefined) {
    if (!(await isFolder(given))) throw new CliInputError(`training folder ${given} is not a folder`);
    return given;
  }
  return (await isFolder(book.training.source)) ? book.training.source : undefined;
}

/**
 * The codebook's training vectors drawn again from its training folder with the stride, vector cap, seed and mean
 * removal it records (the same vectors training used when the folder holds the same images).
 * @returns N × d, row-major
 */
export async function codebookTrainingVectorsFromFolder(ctx: CliContext, dir: string, book: Codebook, progress?: Progress): Promise<Float32Array> {
  const patch = book.patch!;
  const t = book.training;
  const out = await trainingVectorsFromFolder(
    ctx,
    dir,
    'training folder',
    {
      patch: { width: patch.width, height: patch.height },
      color: patch.color,
      stride: t.stride,
      sample: t.sample ?? undefined,
      seed: t.seed ?? undefined,
      preprocessing: book.preprocessing,
      codebookSize: book.size,
    },
    progress,
  );
  return out.vectors;
}

/** One image file, or every image of a folder (sorted by name). */
export async function loadImagesAt(path: string, book: Codebook, progress?: Progress): Promise<PixelImage[]> {
  const color = book.patch!.color;
  return (await isFolder(path)) ? loadImageFolder(path, color, 'image folder', progress) : [await loadImageFile(path, color)];
}
