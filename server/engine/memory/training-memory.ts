import { decodedImageBytes, type ColorMode } from '../io/image';
import { boundTableBytes } from '../parallel/nearest-search';

/**
 * Bytes per training vector that a training pass holds besides the vectors themselves: the search's indices
 * (uint32) and exact distances (float64), each twice (the workers' shared state and the caller's copy) = 24, and
 * k-means++ seeding's state (float64 distance, uint32 nearest codeword, float64 norm) = 20, which covers the smaller
 * per-vector arrays of the other starts (a uint32 order or partition) as well. Counted from
 * parallel/nearest-search.ts and core/init.ts; `npm run bench` measures the peak against this estimate.
 */
const SEARCH_BYTES_PER_VECTOR = 44;

/**
 * Bytes per codebook component (K × d of them) on the training thread: the codewords being trained, the previous
 * iteration's, the copy shared with the workers (float32 each), the float64 centroid sums, the split's new
 * codebook, and every codebook kept for the result (at most 2K codewords in all for a sweep of sizes 1, 2, 4 … K,
 * plus their copies as stored rows): 4 + 4 + 4 + 8 + 4 + 8 + 8.
 */
const CODEBOOK_BYTES_PER_COMPONENT = 40;
/** …and per thread running the search kernel: its codebook in row order and in the kernel's block layout (wasm/kernel.ts). */
const KERNEL_BYTES_PER_COMPONENT = 8;

/** Decoded images counted: the current one and its predecessor awaiting collection (see imageBytes). */
const IMAGES_HELD = 2;

export interface TrainingMemoryInput {
  /** N: the training vectors after sampling. */
  vectors: number;
  /** d: components per vector. */
  dimension: number;
  /** K: the largest codebook trained. */
  codebookSize: number;
  /** Threads the search runs on (each holds its own copy of the codebook); the calling thread counts besides. */
  threads: number;
  /** The largest training image (images are decoded one at a time while their vectors are taken); null when there is none. */
  largestImage: { width: number; height: number } | null;
  color: ColorMode;
}

/** Peak bytes of one training job, by what holds them. */
export interface TrainingMemory {
  /** N × d × 4: the training vectors, held once, in shared memory. */
  vectorBytes: number;
  /** Per-vector working state of a pass (SEARCH_BYTES_PER_VECTOR × N). */
  searchBytes: number;
  /** The block-bound table at K, and at K/2 (the previous size's table may not have been collected yet). */
  boundBytes: number;
  /** Codebooks on the training thread and in each search thread. */
  codebookBytes: number;
  /** The largest training image decoded, twice: the one being decoded and the one before it, not yet collected. */
  imageBytes: number;
  totalBytes: number;
}

/**
 * What a training job holds at its peak. The terms are added although the image is decoded before the training
 * passes start: the decoding thread's pixels may not have been collected by then, and an estimate that errs
 * should err high. One definition, used by run creation (TRAINING_MAX_BYTES) and the training job.
 */
export function trainingMemory(input: TrainingMemoryInput): TrainingMemory {
  const { vectors: n, dimension: d, codebookSize: k } = input;
  const vectorBytes = n * d * 4;
  const searchBytes = n * SEARCH_BYTES_PER_VECTOR;
  const boundBytes = boundTableBytes(n, d, k) + (k > 1 ? boundTableBytes(n, d, Math.ceil(k / 2)) : 0);
  const codebookBytes = k * d * (CODEBOOK_BYTES_PER_COMPONENT + KERNEL_BYTES_PER_COMPONENT * (input.threads + 1));
  // The previous image's arrays are garbage by then, but V8 frees ArrayBuffer memory only at its next collection:
  // `npm run bench` measured typed arrays peaking at the vectors plus about two decoded images.
  const imageBytes = input.largestImage ? IMAGES_HELD * decodedImageBytes(input.largestImage.width, input.largestImage.height, input.color) : 0;
  return {
    vectorBytes,
    searchBytes,
    boundBytes,
    codebookBytes,
    imageBytes,
    totalBytes: vectorBytes + searchBytes + boundBytes + codebookBytes + imageBytes,
  };
}
