import { basename } from 'node:path';
import { decodeImage, parseCodebookJson, readNpy, type Codebook, type ColorMode, type NpyMatrix, type PixelImage } from '../engine';
import { listImages, readInput } from './files';
import type { Progress } from './progress';

export async function loadCodebook(path: string): Promise<Codebook> {
  const text = (await readInput(path, 'codebook')).toString('utf8');
  return parseCodebookJson(text, path);
}

export async function loadVectors(path: string): Promise<NpyMatrix> {
  return readNpy(await readInput(path, 'vectors file'), path);
}

export async function loadImageFile(path: string, color: ColorMode): Promise<PixelImage> {
  return decodeImage(await readInput(path, 'image'), color, path);
}

/** Decodes every image of a folder; the first that fails stops the command with its name in the message. */
export async function loadImageFolder(dir: string, color: ColorMode, what: string, progress?: Progress): Promise<PixelImage[]> {
  const files = await listImages(dir, what);
  const images: PixelImage[] = [];
  for (const file of files) {
    images.push(await loadImageFile(file, color));
    progress?.update(images.length / files.length, basename(file));
  }
  return images;
}

export function describeVectorsAs(codebook: Codebook): 'pixel' | 'component' {
  return codebook.patch ? 'pixel' : 'component';
}
