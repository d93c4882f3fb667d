import { createHash } from 'node:crypto';

/**
 * SHA-256 (FIPS 180-4) over the codewords as float32 little-endian bytes, row-major, as lowercase hex.
 * Written through a DataView so the bytes are little-endian whatever the host's byte order.
 * @param codewords  K × d, row-major
 */
export function codewordChecksum(codewords: Float32Array): string {
  const bytes = new Uint8Array(codewords.length * 4);
  const view = new DataView(bytes.buffer);
  for (let i = 0; i < codewords.length; i += 1) view.setFloat32(4 * i, codewords[i], true);
  return createHash('sha256').update(bytes).digest('hex');
}

/** The checksum as the 32 raw bytes the container stores. */
export function checksumBytes(hex: string): Uint8Array {
  return Uint8Array.from(Buffer.from(hex, 'hex'));
}
