/**
 * Bits a fixed-length code needs for K codewords: ceil(log2 K), and 0 for K = 1 (nothing to send).
 * For K not a power of two this rounds up — a fixed-length code cannot spend fractional bits.
 * Counted with integers so no floating-point log can land a hair above a power of two.
 */
export function indexBits(size: number): number {
  let bits = 0;
  while (2 ** bits < size) bits += 1;
  return bits;
}
