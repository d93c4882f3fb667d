/**
 * Fixed-width bit packing, most significant bit first, the stream zero-padded to a whole byte.
 * `bits` may be 0 (a one-codeword codebook), which packs to zero bytes.
 */
export function packedLength(count: number, bits: number): number {
  return Math.ceil((count * bits) / 8);
}

/** Widths up to this take the 32-bit integer paths: fewer than 8 + 16 = 24 pending bits never overflow. */
const INT_BITS = 16;

export function packBits(values: ArrayLike<number>, bits: number, out: Uint8Array, offset = 0): number {
  if (bits === 8) {
    for (let i = 0; i < values.length; i += 1) out[offset + i] = values[i];
    return values.length;
  }
  if (bits > 0 && bits <= INT_BITS) {
    let acc = 0;
    let pending = 0;
    let pos = offset;
    for (let i = 0; i < values.length; i += 1) {
      acc = (acc << bits) | values[i];
      pending += bits;
      while (pending >= 8) {
        pending -= 8;
        out[pos++] = (acc >>> pending) & 0xff;
      }
      acc &= (1 << pending) - 1;
    }
    if (pending > 0) out[pos++] = (acc << (8 - pending)) & 0xff;
    return pos - offset;
  }
  let acc = 0; // pending bits, fewer than 8 + bits ≤ 40 of them, so plain numbers never overflow
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
  if (bits === 8) {
    out.set(bytes.subarray(offset, offset + count));
    return;
  }
  if (bits > 0 && bits <= INT_BITS) {
    let acc = 0;
    let available = 0;
    let pos = offset;
    const mask = (1 << bits) - 1;
    for (let i = 0; i < count; i += 1) {
      while (available < bits) {
        acc = ((acc << 8) | bytes[pos++]) & 0xffffff;
        available += 8;
      }
      available -= bits;
      out[i] = (acc >>> available) & mask;
    }
    return;
  }
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
