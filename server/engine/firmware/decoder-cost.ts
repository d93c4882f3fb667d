// What a codebook costs the device that codes or decodes with it: table bytes, operations per block and per pixel,
// and the longest code of a block. The operation counts are the structure's (structures/cost.ts, one definition);
// this adds the codebook's geometry and the firmware tables, so the codebook page and the API read one summary.
import type { Codebook } from '../format/codebook-schema';
import { codebookCost } from '../structures/cost';
import type { StructureKind } from '../vocabulary';
import { structureTableBytes } from './c-bundle';
import { fixedPointTable, fixedPointTableBytes } from './fixed-point';
import { RESIDUAL_WIDTHS } from './widths';

/** Bytes of one float32 table entry. */
const FLOAT_BYTES = 4;

export interface OperationCounts {
  /** Encoder multiply-adds (one per component of each squared distance evaluated). */
  encodeMultiplyAdds: number;
  /** Encoder comparisons picking the nearest candidate. */
  encodeComparisons: number;
  /** Decoder additions (summing residual stages). */
  decodeAdds: number;
  /** Decoder comparisons turning the index bits into a table row. */
  decodeComparisons: number;
}

export interface FirmwareTableCost {
  /** C element type of the exported table. */
  type: 'uint8' | 'int8' | 'int16';
  fractionBits: number;
  /** Components saturated at this width (0 for uint8). */
  saturated: number;
  /** The codeword table (fixedPointTableBytes). */
  codewordBytes: number;
  /** The structure's own tables: Huffman code, tree children or stage offsets (structureTableBytes). */
  structureBytes: number;
}

export interface DecoderCost {
  structure: StructureKind;
  dimension: number;
  /** Pixels one block covers (patch width × height; a colour block has 3 components a pixel). */
  pixelsPerBlock: number;
  /** Codewords the encoder searches (every node of a tree) and those a decoder reads blocks from (a tree's leaves). */
  encoderCodewords: number;
  decoderCodewords: number;
  /** float32 tables: the encoder's and the decoder's. */
  encoderFloatBytes: number;
  decoderFloatBytes: number;
  /** The firmware table at each storage it can take: uint8 for plain codebooks; int16 and int8 for signed ones. */
  firmware: FirmwareTableCost[];
  /** Worst case per block, and the same divided by pixels per block. */
  perBlock: OperationCounts;
  perPixel: OperationCounts;
  /** Longest index of a block in bits (fixed index bits, longest Huffman code, deepest tree leaf), the mean code's bits, and their sum. */
  maxIndexBits: number;
  meanBits: number;
  maxBitsPerBlock: number;
  /** Whether every block's index has the same length. */
  fixedRate: boolean;
}

/** What the decoder cost reads of a codebook. */
export type CostedCodebook = Pick<Codebook, 'size' | 'dimension' | 'codewords' | 'preprocessing' | 'structure'> & { patch: { width: number; height: number } | null };

/** The decoder cost of a codebook (per pixel of its patch; per component when it has none). */
export function decoderCost(codebook: CostedCodebook): DecoderCost {
  const d = codebook.dimension;
  const pixelsPerBlock = codebook.patch ? codebook.patch.width * codebook.patch.height : d;
  const cost = codebookCost(codebook.structure, codebook.size, d);
  const perBlock: OperationCounts = {
    encodeMultiplyAdds: cost.encodeMultiplyAdds,
    encodeComparisons: cost.encodeComparisons,
    decodeAdds: cost.decodeAdds,
    decodeComparisons: cost.decodeComparisons,
  };
  const perPixel: OperationCounts = {
    encodeMultiplyAdds: perBlock.encodeMultiplyAdds / pixelsPerBlock,
    encodeComparisons: perBlock.encodeComparisons / pixelsPerBlock,
    decodeAdds: perBlock.decodeAdds / pixelsPerBlock,
    decodeComparisons: perBlock.decodeComparisons / pixelsPerBlock,
  };
  const structureBytes = structureTableBytes(codebook);
  const firmware: FirmwareTableCost[] = [];
  for (const width of RESIDUAL_WIDTHS) {
    const table = fixedPointTable(codebook, width);
    // A plain codebook's table is uint8 whatever width is asked for: list it once.
    if (firmware.some((f) => f.type === table.type)) continue;
    firmware.push({ type: table.type, fractionBits: table.fractionBits, saturated: table.saturated, codewordBytes: fixedPointTableBytes(table, codebook), structureBytes });
  }
  const meanBits = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  return {
    structure: codebook.structure.kind,
    dimension: d,
    pixelsPerBlock,
    encoderCodewords: cost.tableCodewords,
    decoderCodewords: cost.decoderCodewords,
    encoderFloatBytes: cost.tableCodewords * d * FLOAT_BYTES,
    decoderFloatBytes: cost.decoderCodewords * d * FLOAT_BYTES,
    firmware,
    perBlock,
    perPixel,
    maxIndexBits: cost.maxIndexBits,
    meanBits,
    maxBitsPerBlock: cost.maxIndexBits + meanBits,
    fixedRate: cost.fixedRate,
  };
}
