/**
 * Canonical, length-limited prefix code for codeword indices (pure; no I/O).
 *
 * - Lengths: `huffmanCodeLengths(counts, maxLength)` gives the lengths of an optimal prefix code under a maximum
 *   length, by package-merge (L. L. Larmore and D. S. Hirschberg, "A fast algorithm for optimal length-limited
 *   Huffman codes", JACM 37(3), 1990). When the limit does not bind, the result costs exactly what an unlimited
 *   Huffman code costs. Symbols with a zero count get no code (length 0). A single used symbol gets a 1-bit code
 *   ("0"): a zero-length code could not be written, and one bit a symbol keeps every stream self-delimiting per symbol.
 *   With two or more used symbols the code is complete (Σ 2^−l = 1).
 * - Codes: `canonicalCode(lengths)` assigns codes as RFC 1951 §3.2.2 does: shorter codes first, and codes of one length
 *   consecutive in symbol order.
 * - Bits: MSB-first. Each code is written most significant bit first, and bytes fill from their most significant bit;
 *   the last byte is padded with zero bits. (RFC 1951 packs bits LSB-first; MSB-first lets a decoder read the next
 *   `maxLength` bits as one integer and look them up in one table.)
 * - Decoding is table-driven: one table of 2^maxLength entries (at most 2^16), each holding the symbol and its length
 *   for every bit pattern that starts with that symbol's code. A truncated stream, a bit pattern no code starts with,
 *   non-zero padding or trailing bytes fail with EngineInputError `ENGINE_INVALID_BITSTREAM`.
 */
import { EngineInputError } from '../input-error';
import { EngineError } from './errors';

/** The longest code the coder writes and reads (and the default limit of `huffmanCodeLengths`). */
export const MAX_CODE_LENGTH = 16;
/** The largest limit `huffmanCodeLengths` accepts (lengths above MAX_CODE_LENGTH are for measurement only). */
export const MAX_LENGTH_LIMIT = 32;

const invalidInput = (message: string, details?: Record<string, unknown>) => new EngineError('ENGINE_INVALID_INPUT', message, details);

/**
 * Code lengths of an optimal prefix code for `counts` whose lengths are at most `maxLength`.
 * Ties between equal counts go to the lower symbol index (it gets the longer code or the same), so the result is
 * a function of the counts alone.
 * @param counts    per symbol: non-negative integer counts (K entries)
 * @param maxLength 1..32; the default 16 is what the coder handles
 * @returns lengths: K entries, 0 for symbols with a zero count
 */
export function huffmanCodeLengths(counts: ArrayLike<number>, maxLength = MAX_CODE_LENGTH): Uint8Array {
  if (!Number.isInteger(maxLength) || maxLength < 1 || maxLength > MAX_LENGTH_LIMIT) {
    throw invalidInput(`maxLength must be an integer in 1..${MAX_LENGTH_LIMIT}`, { maxLength });
  }
  const k = counts.length;
  const used: number[] = [];
  let total = 0;
  for (let s = 0; s < k; s++) {
    const c = counts[s];
    if (!Number.isInteger(c) || c < 0) throw invalidInput(`counts[${s}] must be a non-negative integer`, { count: c });
    if (c > 0) used.push(s);
    total += c;
  }
  // Package weights are sums of counts; they stay exact in float64 below 2^53.
  if (total > Number.MAX_SAFE_INTEGER) throw invalidInput('the counts add up to more than 2^53 − 1');
  const lengths = new Uint8Array(k);
  const n = used.length;
  if (n === 0) return lengths;
  if (n === 1) {
    lengths[used[0]] = 1;
    return lengths;
  }
  if (n > 2 ** maxLength) {
    throw invalidInput(`${n} used symbols cannot all have codes of at most ${maxLength} bits`, { used: n, maxLength });
  }
  used.sort((a, b) => counts[a] - counts[b] || a - b);
  const leaf = Float64Array.from(used, (s) => counts[s]);

  // Package-merge. List L (deepest) holds the leaves; list l < L merges the leaves with the packages (pairs) of list
  // l + 1, a leaf before a package of equal weight. Only the first 2n − 2 items of list 1 are chosen, and a chosen
  // prefix of list l uses a prefix of list l + 1 of twice its packages, so every list is cut at 2n − 2 items.
  const cap = 2 * n - 2;
  const isPackage: Uint8Array[] = new Array(maxLength);
  let below = leaf.slice(0, Math.min(n, cap));
  isPackage[maxLength - 1] = new Uint8Array(below.length);
  for (let level = maxLength - 2; level >= 0; level--) {
    const packages = below.length >> 1;
    const size = Math.min(n + packages, cap);
    const weight = new Float64Array(size);
    const flags = new Uint8Array(size);
    let i = 0;
    let p = 0;
    for (let o = 0; o < size; o++) {
      const pw = p < packages ? below[2 * p] + below[2 * p + 1] : Infinity;
      if (i < n && leaf[i] <= pw) {
        weight[o] = leaf[i++];
      } else {
        weight[o] = pw;
        flags[o] = 1;
        p++;
      }
    }
    isPackage[level] = flags;
    below = weight;
  }
  // Each chosen leaf adds one bit to its symbol's length; the chosen leaves of a list are its lightest ones.
  let chosen = cap;
  for (let level = 0; level < maxLength && chosen > 0; level++) {
    const flags = isPackage[level];
    let packages = 0;
    for (let o = 0; o < chosen; o++) packages += flags[o];
    const leaves = chosen - packages;
    for (let j = 0; j < leaves; j++) lengths[used[j]]++;
    chosen = 2 * packages;
  }
  return lengths;
}

/** Σ count·length: the bits a stream of these counts takes under these lengths. */
export function codedBits(lengths: ArrayLike<number>, counts: ArrayLike<number>): number {
  let bits = 0;
  for (let s = 0; s < counts.length; s++) bits += counts[s] * lengths[s];
  return bits;
}

/** Σ 2^−l over the symbols that have a code: 1 for a complete code, below 1 for an incomplete one. */
export function kraftSum(lengths: ArrayLike<number>): number {
  let sum = 0;
  for (let s = 0; s < lengths.length; s++) if (lengths[s] > 0) sum += 2 ** -lengths[s];
  return sum;
}

export interface CanonicalCode {
  /** Per symbol (K entries): code length in bits, 0 = the symbol has no code. */
  readonly lengths: Uint8Array;
  /** Per symbol (K entries): the code, right-aligned in its `lengths[s]` low bits, written MSB first. */
  readonly codes: Uint32Array;
  /** The longest length in use (0 when no symbol has a code). */
  readonly maxLength: number;
}

const badLengths = (message: string, field?: string) => new EngineInputError('ENGINE_INVALID_ARGUMENT', message, field);

/**
 * Canonical code for the given lengths (RFC 1951 §3.2.2: count codes per length, the first code of each length,
 * then consecutive codes in symbol order). Lengths must be integers 0..16 and satisfy Kraft's inequality.
 * @param lengths per symbol (K entries), 0 = no code
 */
export function canonicalCode(lengths: ArrayLike<number>): CanonicalCode {
  const k = lengths.length;
  const own = new Uint8Array(k);
  const perLength = new Array<number>(MAX_CODE_LENGTH + 1).fill(0);
  let maxLength = 0;
  for (let s = 0; s < k; s++) {
    const l = lengths[s];
    if (!Number.isInteger(l) || l < 0 || l > MAX_CODE_LENGTH) {
      throw badLengths(`code length of symbol ${s} must be an integer in 0..${MAX_CODE_LENGTH}, not ${String(l)}`, `lengths[${s}]`);
    }
    own[s] = l;
    if (l > 0) perLength[l]++;
    if (l > maxLength) maxLength = l;
  }
  // Kraft's inequality in integers: Σ count_l · 2^(16 − l) ≤ 2^16.
  let kraft = 0;
  for (let l = 1; l <= MAX_CODE_LENGTH; l++) kraft += perLength[l] * 2 ** (MAX_CODE_LENGTH - l);
  if (kraft > 2 ** MAX_CODE_LENGTH) throw badLengths('the code lengths over-subscribe the code space (Σ 2^−l > 1): no prefix code has them', 'lengths');
  // RFC 1951 §3.2.2, step 2: the smallest code of each length.
  const next = new Array<number>(MAX_CODE_LENGTH + 1).fill(0);
  let code = 0;
  for (let l = 1; l <= MAX_CODE_LENGTH; l++) {
    code = (code + perLength[l - 1]) << 1;
    next[l] = code;
  }
  // Step 3: consecutive values per length, in symbol order.
  const codes = new Uint32Array(k);
  for (let s = 0; s < k; s++) if (own[s] > 0) codes[s] = next[own[s]]++;
  return { lengths: own, codes, maxLength };
}

/** Writes bit fields MSB-first into a growing byte buffer. */
export class BitWriter {
  private bytes = new Uint8Array(256);
  private used = 0;
  private acc = 0;
  private pending = 0;
  private total = 0;

  /** Appends the `length` (0..24) low bits of `value`, most significant first. */
  write(value: number, length: number): void {
    this.acc = ((this.acc << length) | (value & ((1 << length) - 1))) >>> 0;
    this.pending += length;
    this.total += length;
    while (this.pending >= 8) {
      this.pending -= 8;
      this.push((this.acc >>> this.pending) & 0xff);
    }
    this.acc &= (1 << this.pending) - 1;
  }

  /** The bytes written, the last one padded with zero bits, and the number of bits that carry data. */
  finish(): { bytes: Uint8Array; bitLength: number } {
    if (this.pending > 0) {
      this.push((this.acc << (8 - this.pending)) & 0xff);
      this.pending = 0;
      this.acc = 0;
    }
    return { bytes: this.bytes.slice(0, this.used), bitLength: this.total };
  }

  private push(byte: number): void {
    if (this.used === this.bytes.length) {
      const grown = new Uint8Array(this.bytes.length * 2);
      grown.set(this.bytes);
      this.bytes = grown;
    }
    this.bytes[this.used++] = byte;
  }
}

/** Reads bit fields MSB-first; bits past the end read as zero (callers check `remaining`). */
export class BitReader {
  private pos = 0;
  constructor(private readonly bytes: Uint8Array) {}

  /** Bits not yet consumed. */
  get remaining(): number {
    return this.bytes.length * 8 - this.pos;
  }

  get position(): number {
    return this.pos;
  }

  /** The next `length` (1..16) bits as an integer, without consuming them. */
  peek(length: number): number {
    const b = this.bytes;
    const at = this.pos >>> 3;
    const window = ((b[at] ?? 0) << 16) | ((b[at + 1] ?? 0) << 8) | (b[at + 2] ?? 0);
    return (window >>> (24 - (this.pos & 7) - length)) & ((1 << length) - 1);
  }

  skip(length: number): void {
    this.pos += length;
  }

  read(length: number): number {
    const v = this.peek(length);
    this.pos += length;
    return v;
  }
}

/**
 * Encodes symbols (indices into the code's symbol table) as one MSB-first bit stream.
 * A symbol without a code fails with ENGINE_INVALID_ARGUMENT.
 */
export function encodeSymbols(code: CanonicalCode, symbols: ArrayLike<number>): { bytes: Uint8Array; bitLength: number } {
  const writer = new BitWriter();
  const k = code.lengths.length;
  for (let i = 0; i < symbols.length; i++) {
    const s = symbols[i];
    const l = Number.isInteger(s) && s >= 0 && s < k ? code.lengths[s] : 0;
    if (l === 0) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `symbol ${String(s)} at position ${i} has no code`, `symbols[${i}]`);
    writer.write(code.codes[s], l);
  }
  return writer.finish();
}

const invalidStream = (message: string) => new EngineInputError('ENGINE_INVALID_BITSTREAM', message);

/** Table-driven decoder of one canonical code (the table is built once; decode as many streams as needed). */
export class HuffmanDecoder {
  /** 2^maxLength entries: symbol · 32 + length for every pattern that starts with the symbol's code; 0 = no code. */
  private readonly table: Uint32Array;
  private readonly bits: number;

  constructor(code: CanonicalCode) {
    this.bits = code.maxLength;
    this.table = new Uint32Array(2 ** this.bits);
    for (let s = 0; s < code.lengths.length; s++) {
      const l = code.lengths[s];
      if (l === 0) continue;
      const shift = this.bits - l;
      const first = code.codes[s] << shift;
      this.table.fill(s * 32 + l, first, first + (1 << shift));
    }
  }

  /**
   * Decodes exactly `count` symbols from `bytes`, which must hold nothing else: the stream ends in the byte where
   * the last code ends, padded with zero bits. The count frames the stream: padding bits may form a short code, so
   * the container records how many symbols a stream holds.
   * @returns symbols: `count` entries
   */
  decode(bytes: Uint8Array, count: number): Uint32Array {
    if (!Number.isInteger(count) || count < 0) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `count must be a non-negative integer, not ${String(count)}`, 'count');
    const out = new Uint32Array(count);
    const reader = new BitReader(bytes);
    if (count > 0 && this.bits === 0) throw invalidStream(`the code has no symbols, so ${count} symbols cannot be read`);
    for (let i = 0; i < count; i++) {
      const entry = this.table[reader.peek(this.bits)];
      const length = entry & 31;
      if (entry === 0 || length > reader.remaining) {
        if (reader.remaining < this.bits) throw invalidStream(`the stream ends inside symbol ${i + 1} of ${count} (at bit ${reader.position})`);
        throw invalidStream(`no code starts with the bits at bit ${reader.position} (symbol ${i + 1} of ${count})`);
      }
      out[i] = (entry - length) / 32;
      reader.skip(length);
    }
    const padding = reader.remaining;
    if (padding >= 8) throw invalidStream(`${Math.floor(padding / 8)} byte(s) follow the last of ${count} symbols`);
    if (padding > 0 && reader.peek(padding) !== 0) throw invalidStream('the padding after the last symbol is not zero');
    return out;
  }
}

/** Decodes `count` symbols (HuffmanDecoder.decode, building the table for this one call). */
export function decodeSymbols(code: CanonicalCode, bytes: Uint8Array, count: number): Uint32Array {
  return new HuffmanDecoder(code).decode(bytes, count);
}
