import { availableParallelism, totalmem } from 'node:os';
import { basename } from 'node:path';
import {
  decodeImage, decodeImageForCoding, formatBytes, parseCodebookJson, patchPositions, readImageSize, readNpy, streamImagesToTrainingVectors, trainingMemory,
  type CodableImage, type Codebook, type ColorMode, type NpyMatrix, type PatchShape, type PixelImage, type PreprocessingInfo, type TrainingImageSource,
} from '../engine';
import type { CliContext } from './context';
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

/** loadImageFile's image for the encoder: its decoded bytes when they are the pixels (engine decodeImageForCoding). */
export async function loadImageFileForCoding(path: string, color: ColorMode): Promise<CodableImage> {
  return decodeImageForCoding(await readInput(path, 'image'), color, path);
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

export interface FolderVectorOptions {
  patch: PatchShape;
  color: ColorMode;
  stride?: number;
  sample?: number;
  seed?: number;
  preprocessing: PreprocessingInfo;
  /** The largest codebook to be trained, and the threads training may use: for the memory estimate. */
  codebookSize: number;
  threads?: number;
}

/**
 * Training vectors from every image of a folder, decoded one at a time (the sample is drawn from the headers' sizes
 * first, as the studio's training jobs do), so peak memory is the vectors plus one image. Warns on stderr when the
 * training about to start is estimated to need more memory than this machine has; the studio refuses such runs
 * (TRAINING_MAX_BYTES), the command line leaves the decision to whoever runs it.
 */
export async function trainingVectorsFromFolder(ctx: CliContext, dir: string, what: string, o: FolderVectorOptions, progress?: Progress) {
  const files = await listImages(dir, what);
  const sources: TrainingImageSource[] = [];
  let decoded = 0;
  for (const file of files) {
    const { width, height } = await readImageSize(file, file);
    sources.push({
      name: file,
      width,
      height,
      decode: async () => {
        const image = await loadImageFile(file, o.color);
        decoded += 1;
        progress?.update(decoded / files.length, basename(file));
        return image;
      },
    });
  }
  const available = sources.reduce((n, s) => n + patchPositions(s.width, s.height, o.patch, o.stride), 0);
  const largest = sources.reduce((a, s) => (s.width * s.height > a.width * a.height ? s : a));
  const memory = trainingMemory({
    vectors: Math.min(available, o.sample ?? available),
    dimension: o.patch.width * o.patch.height * (o.color === 'rgb' ? 3 : 1),
    codebookSize: o.codebookSize,
    threads: o.threads ?? availableParallelism(),
    largestImage: largest,
    color: o.color,
  });
  if (memory.totalBytes > totalmem()) {
    ctx.stderr.write(
      `cellwright: warning: training will hold about ${formatBytes(memory.totalBytes)}, more than this machine's ${formatBytes(totalmem())} of memory; ` +
        'consider a lower --vector-cap or a larger --stride\n',
    );
  }
  return streamImagesToTrainingVectors(sources, { patch: o.patch, color: o.color, stride: o.stride, sample: o.sample, seed: o.seed, preprocessing: o.preprocessing });
}
