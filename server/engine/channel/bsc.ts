import type { Rng } from '../core/rng';

/**
 * A binary symmetric channel: flips each bit of `bytes[from, to)` independently with probability `p`, in place.
 * Instead of one draw per bit it draws the gap to the next flipped bit, which is geometric with parameter p
 * (the waiting time of independent Bernoulli trials), so a megabyte at p = 10^-5 costs a few hundred draws.
 * @returns the number of bits flipped
 */
export function flipBits(bytes: Uint8Array, p: number, rng: Rng, from = 0, to = bytes.length): number {
  if (p <= 0 || to <= from) return 0;
  const totalBits = (to - from) * 8;
  // ln(1 − p) with log1p keeps its precision at tiny p.
  const logKeep = Math.log1p(-p);
  let flips = 0;
  let bit = -1;
  for (;;) {
    // 1 − next() lies in (0, 1], so the log is finite; the gap counts the bits kept before the next flip.
    const gap = p >= 1 ? 0 : Math.floor(Math.log(1 - rng.next()) / logKeep);
    bit += gap + 1;
    if (!(bit < totalBits)) return flips;
    bytes[from + Math.floor(bit / 8)] ^= 0x80 >>> (bit % 8);
    flips += 1;
  }
}
