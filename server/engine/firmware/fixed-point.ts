import { EngineInputError } from '../input-error';
import type { Codebook } from '../format/codebook-schema';
import { codebookCost } from '../structures/cost';

/** Storage of a mean-removed codebook's residual codewords in the firmware table; plain codebooks are always uint8. */
import { RESIDUAL_WIDTHS, type ResidualWidth } from './widths';
export { RESIDUAL_WIDTHS, type ResidualWidth };

/**
 * Fraction bits are capped at 12 so the C decoder's sum stays inside int32: a codeword of at most 2^15 scaled by
 * 2^(m+1) ≤ 2^9 is below 2^24, and the mean level (2q + 1) · 255 · 2^F ≤ 511 · 255 · 2^12 is below 2^29.
 */
export const MAX_FRACTION_BITS = 12;

const RANGES = { uint8: [0, 255], int8: [-128, 127], int16: [-32768, 32767] } as const;

/** Bytes of one stored value of each C element type. */
const ELEMENT_BYTES = { uint8: 1, int8: 1, int16: 2 } as const satisfies Record<keyof typeof RANGES, number>;

/**
 * Bytes the exported C codeword table takes on the device: the rows it holds × d × element size. The rows are the
 * decoder's codewords (codebookCost): a tree's leaves only (its internal nodes serve the encoder, and the bundle's
 * `cw_codewords` leaves them out), every entry of other structures.
 */
export function fixedPointTableBytes(table: Pick<FixedPointTable, 'type'>, codebook: Pick<Codebook, 'structure' | 'size' | 'dimension'>): number {
  return codebookCost(codebook.structure, codebook.size, codebook.dimension).decoderCodewords * codebook.dimension * ELEMENT_BYTES[table.type];
}

/** The codewords as the exported C table holds them. */
export interface FixedPointTable {
  /** C element type: uint8_t for plain codebooks, int8_t or int16_t for mean-removed residuals and residual stages */
  type: keyof typeof RANGES;
  /** F of the Q format: a stored value v stands for v / 2^F (0 for uint8) */
  fractionBits: number;
  /** stored values, K × d row-major */
  values: Int32Array;
  /** residual components whose rounded value fell outside the type's range and were saturated to its end (0 for uint8) */
  saturated: number;
  /** the same values as numbers (v / 2^F, exact in float32), for decoding with the engine's own decoder */
  codewords: Float32Array;
}

/** Round half up, as the decoder rounds pixels (server/engine/format/codec.ts, reconstruct). */
function roundHalfUp(x: number): number {
  return Math.floor(x + 0.5);
}

/**
 * Plain codebooks: each component rounded half up and clamped to 0..255, exactly what the decoder does to a pixel,
 * so a table-lookup decoder reproduces the float decoder bit for bit.
 * Mean-removed codebooks and residual stages (mean-removed or not): signed Q(F) (`width` bits, two's complement), one F
 * for the whole table, the largest number of fraction bits (≤ MAX_FRACTION_BITS) at which every component still fits;
 * at F = 0 the values that do not fit saturate. Every stored value v / 2^F is exact in float32 and a sum of at most
 * 8 stages of them is exact in float64, so the engine's decoder with these values equals the C decoder's integer sum.
 */
export function fixedPointTable(codebook: Pick<Codebook, 'codewords' | 'preprocessing' | 'structure'>, width: ResidualWidth = 'int16'): FixedPointTable {
  const src = codebook.codewords;
  // Residual stages are summed before the pixel rule, so only signed values (later stages are differences) fit them.
  if (codebook.preprocessing.kind === 'none' && codebook.structure.kind !== 'residual') {
    const values = new Int32Array(src.length);
    // The decoder clamps to 0..255 before it rounds, so an entry clamped here decodes exactly as its float value does:
    // nothing is lost, and nothing counts as saturated.
    for (let i = 0; i < src.length; i += 1) {
      const v = src[i];
      values[i] = v <= 0 ? 0 : v >= 255 ? 255 : roundHalfUp(v);
    }
    return { type: 'uint8', fractionBits: 0, values, saturated: 0, codewords: Float32Array.from(values) };
  }
  if (!RESIDUAL_WIDTHS.includes(width)) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `residual width must be int8 or int16, got ${String(width)}`, 'width');
  const [lo, hi] = RANGES[width];
  let peakLow = 0;
  let peakHigh = 0;
  for (let i = 0; i < src.length; i += 1) {
    if (src[i] < peakLow) peakLow = src[i];
    if (src[i] > peakHigh) peakHigh = src[i];
  }
  let fractionBits = MAX_FRACTION_BITS;
  while (fractionBits > 0 && (roundHalfUp(peakLow * 2 ** fractionBits) < lo || roundHalfUp(peakHigh * 2 ** fractionBits) > hi)) fractionBits -= 1;
  const scale = 2 ** fractionBits;
  const values = new Int32Array(src.length);
  const codewords = new Float32Array(src.length);
  let saturated = 0;
  for (let i = 0; i < src.length; i += 1) {
    let v = roundHalfUp(src[i] * scale);
    if (v < lo || v > hi) {
      saturated += 1;
      v = v < lo ? lo : hi;
    }
    values[i] = v;
    codewords[i] = v / scale;
  }
  return { type: width, fractionBits, values, saturated, codewords };
}

/** The codebook with its codewords replaced by the table's values (same checksum field: the container still names the original). */
export function withFixedPointCodewords(codebook: Codebook, table: FixedPointTable): Codebook {
  return { ...codebook, codewords: table.codewords };
}
