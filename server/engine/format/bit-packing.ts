/**
 * Fixed-width bit packing, most significant bit first, the stream zero-padded to a whole byte.
 * `bits` may be 0 (a one-codeword codebook), which packs to zero bytes.
 */
export function packedLength(count: number, bits: number): number {
  return Math.ceil((count * bits) / 8);
}

export function packBits(values: ArrayLike<number>, bits: number, out: Uint8Array, offset = 0): number {
  let acc = 0; // pending bits, fewer than 8 + bits ≤ 22 of them, so plain numbers never overflow
  let pending = 0;
  let pos = offset;
  for (let i = 0; i < values.length; i += 1) {
    acc = (acc * 2 ** bits) + values[i];
    pending += bits;
    while (pending >= 8) {
      pending -= 8;
      out[pos++] = Math.floor(acc / 2 ** pending) & 0xff;
      acc %= 2 ** pending;
    }
  }
  if (pending > 0) out[pos++] = (acc * 2 ** (8 - pending)) & 0xff;
  return pos - offset;
}

export function unpackBits(bytes: Uint8Array, offset: number, count: number, bits: number, out: Uint32Array | Uint8Array): void {
  let acc = 0;
  let available = 0;
  let pos = offset;
  const mask = 2 ** bits;
  for (let i = 0; i < count; i += 1) {
    while (available < bits) {
      acc = acc * 256 + bytes[pos++];
      available += 8;
    }
    available -= bits;
    const divisor = 2 ** available;
    out[i] = Math.floor(acc / divisor) % mask;
    acc %= divisor;
  }
}
