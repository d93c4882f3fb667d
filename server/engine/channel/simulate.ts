import { createRng } from '../core/rng';
import { unpackBits } from '../format/bit-packing';
import type { Codebook } from '../format/codebook-schema';
import { reconstruct, type EncodedImage } from '../format/codec';
import { HEADER_BYTES, payloadLayout, readContainerHeader, writeContainer } from '../format/container';
import { indexBits } from '../format/rate-bits';
import type { PixelImage } from '../io/image';
import { blockGrid } from '../io/patches';
import { psnrFromMse } from '../metrics/distortion';
import { flipBits } from './bsc';
import { expectedErrorTerms, expectedSquaredError } from './expected';
import { EXPECTED_MAX_BITS } from './limits';
import { concealIndex } from './transition';

/**
 * Decodes a raw container whose payload crossed a noisy channel. The header is taken as received intact (links send
 * it protected, or again: common practice for a few dozen bytes). The payload of fixed-length codes keeps every field
 * at the place the header implies, so a flipped bit damages exactly one index or one mean code and nothing after it:
 * damaged markers are ignored rather than refused, no CRC is checked, and an index that names no codeword is
 * concealed (concealIndex).
 */
export function decodeDamaged(codebook: Codebook, bytes: Uint8Array): EncodedImage {
  const header = readContainerHeader(bytes);
  const patch = codebook.patch!;
  const { blocksX, blocksY } = blockGrid(header.width, header.height, patch);
  const { segments } = payloadLayout(blocksX, blocksY, header.indexBits, header.meanBits, header.resyncRows);
  const payload = bytes.subarray(HEADER_BYTES);
  const blocks = blocksX * blocksY;
  const indices = new Uint32Array(blocks);
  const meanCodes = header.meanBits > 0 ? new Uint8Array(blocks) : null;
  for (const s of segments) {
    unpackBits(payload, s.indexOffset, s.blocks, header.indexBits, indices.subarray(s.firstBlock, s.firstBlock + s.blocks));
    if (meanCodes) unpackBits(payload, s.meanOffset, s.blocks, header.meanBits, meanCodes.subarray(s.firstBlock, s.firstBlock + s.blocks));
  }
  for (let i = 0; i < blocks; i += 1) indices[i] = concealIndex(indices[i], codebook.size);
  return { width: header.width, height: header.height, blocksX, blocksY, indices, meanCodes };
}

export interface ChannelImage {
  image: PixelImage;
  /** the image coded without errors */
  encoded: EncodedImage;
}

export interface ChannelSimulationOptions {
  bers: readonly number[];
  seeds: number;
  /** first seed; simulation s of rate n draws from seed (seed + s) · 65536 + n */
  seed: number;
  resyncRows: number;
  signal?: AbortSignal;
}

export interface ChannelPoint {
  ber: number;
  /** mean over the seeds of the set's MSE (all samples of all images pooled) */
  mse: number;
  psnr: number;
  /** standard error of that mean over the seeds (0 with one seed) */
  mseStdError: number;
  /** the closed form's expected MSE; null where it is not computed (see ChannelCurve.expectedNote) */
  expectedMse: number | null;
  expectedPsnr: number | null;
  /** bits flipped over all seeds and images, and the payload bits they were drawn from */
  flips: number;
  bits: number;
}

export interface ChannelCurve {
  noiselessMse: number;
  noiselessPsnr: number;
  /** raw payload bytes of the whole set (markers included) and the set's pixels */
  payloadBytes: number;
  pixels: number;
  resyncRows: number;
  seeds: number;
  points: ChannelPoint[];
  /** why the expected curve is missing, or null when it is there */
  expectedNote: string | null;
}

function expectedNoteFor(codebook: Codebook): string | null {
  if (codebook.preprocessing.kind === 'mean-removed') return 'the closed form covers the index bits alone; the mean codes of a mean-removed codebook cross the channel too, so only the simulation is shown';
  if (indexBits(codebook.size) > EXPECTED_MAX_BITS) return `the closed form is computed up to ${EXPECTED_MAX_BITS} index bits`;
  return null;
}

function throwIfAborted(signal?: AbortSignal): void {
  if (signal?.aborted) throw signal.reason instanceof Error ? signal.reason : new DOMException('aborted', 'AbortError');
}

/**
 * PSNR against bit-error rate: each image is written as a raw container (with markers every `resyncRows` block rows),
 * its payload sent through a binary symmetric channel `seeds` times per rate, decoded (decodeDamaged) and compared
 * with the original; beside it the closed-form expected MSE of the same images.
 */
export function simulateChannel(codebook: Codebook, images: ChannelImage[], o: ChannelSimulationOptions): ChannelCurve {
  const containers = images.map(({ encoded }) => writeContainer(codebook, encoded, { payload: 'raw', resyncRows: o.resyncRows }));
  const noiseless = images.map(({ encoded }) => reconstruct(codebook, encoded));
  const samples = images.reduce((n, { image }) => n + image.pixels.length, 0);
  let noiselessSe = 0;
  images.forEach(({ image }, n) => {
    for (let k = 0; k < image.pixels.length; k += 1) noiselessSe += (image.pixels[k] - noiseless[n][k]) ** 2;
  });
  const note = expectedNoteFor(codebook);
  const points = o.bers.map((ber, berIndex): ChannelPoint => {
    const perSeed: number[] = [];
    let flips = 0;
    let bits = 0;
    for (let s = 0; s < o.seeds; s += 1) {
      const rng = createRng((o.seed + s) * 65536 + berIndex);
      let se = 0;
      images.forEach(({ image }, n) => {
        throwIfAborted(o.signal);
        const bytes = Uint8Array.from(containers[n]);
        flips += flipBits(bytes, ber, rng, HEADER_BYTES);
        bits += (bytes.length - HEADER_BYTES) * 8;
        const out = reconstruct(codebook, decodeDamaged(codebook, bytes));
        for (let k = 0; k < out.length; k += 1) se += (image.pixels[k] - out[k]) ** 2;
      });
      perSeed.push(se / samples);
    }
    const mse = perSeed.reduce((a, v) => a + v, 0) / perSeed.length;
    const variance = perSeed.length > 1 ? perSeed.reduce((a, v) => a + (v - mse) ** 2, 0) / (perSeed.length - 1) : 0;
    let expectedMse: number | null = null;
    if (note === null) {
      const terms = expectedErrorTerms(codebook, ber);
      expectedMse = images.reduce((a, { image, encoded }, n) => a + expectedSquaredError(codebook, terms, image, encoded, noiseless[n]).expected, 0) / samples;
    }
    return {
      ber, mse, psnr: psnrFromMse(mse), mseStdError: Math.sqrt(variance / perSeed.length),
      expectedMse, expectedPsnr: expectedMse === null ? null : psnrFromMse(expectedMse), flips, bits,
    };
  });
  const noiselessMse = noiselessSe / samples;
  return {
    noiselessMse, noiselessPsnr: psnrFromMse(noiselessMse), payloadBytes: containers.reduce((a, c) => a + c.length - HEADER_BYTES, 0),
    pixels: images.reduce((a, { image }) => a + image.width * image.height, 0), resyncRows: o.resyncRows, seeds: o.seeds, points, expectedNote: note,
  };
}
