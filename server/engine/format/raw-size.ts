import { HEADER_BYTES, payloadLayout } from './container';
import { indexBits } from './rate-bits';

/**
 * Bytes of the container a table-lookup decoder reads for a width × height image: the header and the raw payload
 * (packed indices and mean codes, each stream zero-padded to a byte), without markers; exactly what
 * `cellwright encode --payload raw` writes. Known from the geometry alone, so no image need be coded for it.
 */
export function rawContainerBytes(width: number, height: number, patch: { width: number; height: number }, size: number, meanBits: number): number {
  const blocksX = Math.ceil(width / patch.width);
  const blocksY = Math.ceil(height / patch.height);
  return HEADER_BYTES + payloadLayout(blocksX, blocksY, indexBits(size), meanBits, 0).length;
}
