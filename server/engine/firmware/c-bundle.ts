import { EngineInputError } from '../input-error';
import type { Codebook } from '../format/codebook-schema';
import { CONTAINER_VERSION, MAX_BLOCKS } from '../format/container';
import { INDEX_LAYOUTS, indexCodingOf, type IndexCoding } from '../format/index-coding';
import { canonicalCode } from '../core/huffman';
import { stageOffsets } from '../format/structure-check';
import { CW_DECODE_C, CW_DECODE_H, DECODE_FILE_C } from './c-sources';
import { fixedPointTable, type FixedPointTable, type ResidualWidth } from './fixed-point';

export interface BundleFile {
  name: string;
  text: string;
}

export interface FirmwareBundle {
  files: BundleFile[];
  table: FixedPointTable;
}

const C_TYPES = { uint8: 'uint8_t', int8: 'int8_t', int16: 'int16_t' } as const;

function tableRows(values: Int32Array, perRow: number): string {
  const lines: string[] = [];
  for (let i = 0; i < values.length; i += perRow) lines.push(`  ${Array.from(values.subarray(i, i + perRow)).join(', ')},`);
  return lines.join('\n');
}

function qFormatText(table: FixedPointTable): string {
  if (table.type === 'uint8') return 'uint8, integer pixel values 0..255 (Q8.0 unsigned)';
  const bits = table.type === 'int8' ? 8 : 16;
  return `${table.type}, signed Q${bits - 1 - table.fractionBits}.${table.fractionBits}: a stored value v stands for v / 2^${table.fractionBits}`;
}

const STRUCTURE_TEXT = {
  full: 'full search, fixed-length indices (container versions 1 and 2)',
  'entropy-constrained': 'entropy-constrained, canonical Huffman coded indices (container version 3, layout 1)',
  tree: 'tree, leaf paths from the root (container version 3, layout 2)',
  residual: 'residual stages, one fixed-length index per stage (container version 3, layout 3)',
} as const;

/**
 * The tables the index layout needs, as C: the canonical Huffman code (code counts per length and the symbols in code
 * order, RFC 1951 section 3.2.2), the tree's children, or each residual stage's first table row and bits.
 */
function structureTables(codebook: Codebook): string {
  const st = codebook.structure;
  if (st.kind === 'entropy-constrained') {
    const code = canonicalCode(st.codeLengths);
    const count = new Int32Array(code.maxLength + 1);
    for (const l of code.lengths) if (l > 0) count[l] += 1;
    // Symbols sorted by code length, then by number: the order in which canonical codes are handed out.
    const symbols = Int32Array.from(Array.from(code.lengths.keys()).filter((i) => code.lengths[i] > 0).sort((a, b) => code.lengths[a] - code.lengths[b] || a - b));
    return `
/* Canonical Huffman code of the indices: cw_huff_count[l] codes of length l (entry 0 unused), and the codewords in
 * code order (by length, then number). Code lengths 1..${code.maxLength}. */
static const uint16_t cw_huff_count[${code.maxLength + 1}] = {
${tableRows(count, 16)}
};

static const uint16_t cw_huff_symbols[${symbols.length}] = {
${tableRows(symbols, 16)}
};
`;
  }
  if (st.kind === 'tree') {
    const { internal, children, root } = compactTree(st.children, codebook.size);
    return `
/* The tree, internal nodes only, numbered in breadth-first order (0 the root when CW_CB_TREE_ROOT is 0): internal
 * node i's left and right child are cw_tree_children[2i] and [2i + 1]; a value v >= 0 is another internal node, a
 * value v < 0 the leaf whose codeword is row -1 - v of cw_codewords (only leaves have rows). */
#define CW_CB_TREE_ROOT ${root}
static const int16_t cw_tree_children[${Math.max(2, children.length)}] = {
${tableRows(internal > 0 ? children : Int32Array.from([-1, -1]), 16)}
};
`;
  }
  if (st.kind === 'residual') {
    const { offsets } = stageOffsets(st.bits);
    return `
/* Residual stages: stage s holds 2^cw_stage_bits[s] rows of cw_codewords from row cw_stage_offset[s]. */
static const uint16_t cw_stage_offset[${st.bits.length}] = {
${tableRows(Int32Array.from(offsets.slice(0, st.bits.length)), 16)}
};

static const uint8_t cw_stage_bits[${st.bits.length}] = {
${tableRows(Int32Array.from(st.bits), 16)}
};
`;
  }
  return '';
}

/**
 * Bytes of the structure's own tables in `cw_codebook.h` (structureTables): the Huffman code's counts and symbols
 * (uint16 each), the tree's internal-node children (int16, at least one pair), the residual stages' first rows (uint16)
 * and bits (uint8); none for full search.
 */
export function structureTableBytes(codebook: Pick<Codebook, 'structure' | 'size'>): number {
  const st = codebook.structure;
  if (st.kind === 'entropy-constrained') {
    const code = canonicalCode(st.codeLengths);
    return 2 * (code.maxLength + 1) + 2 * code.lengths.filter((l) => l > 0).length;
  }
  if (st.kind === 'tree') return 2 * Math.max(2, compactTree(st.children, codebook.size).children.length);
  if (st.kind === 'residual') return 3 * st.bits.length;
  return 0;
}

const STRUCTURE_README = {
  full: 'Each block\'s index is b = ceil(log2 K) bits (header byte 9), packed most significant bit first; an index >= K is refused.',
  'entropy-constrained':
    'Each segment\'s index stream is preceded by its byte length N (uint32): the blocks\' canonical Huffman codes (RFC 1951 section 3.2.2: codes of one length are consecutive, in codeword order), most significant bit first. `cw_codebook.h` holds the code as `cw_huff_count[l]` (codes of length l) and `cw_huff_symbols` (codewords in code order); the decoder reads a code bit by bit and, after l bits, checks whether it lies among the codes of length l. A pattern no code starts with, a stream that ends inside a code, more than 7 bits or non-zero bits after the last code, and an N longer than every block at the longest code are refused.',
  tree:
    'Each block names a leaf by its path from the root (0 left, 1 right, first decision first). `cw_tree_children[2i]` and `[2i + 1]` are internal node i\'s children (internal nodes numbered in breadth-first order, the root 0): a value v >= 0 is an internal node, v < 0 the leaf whose codeword is row -1 - v of `cw_codewords`, which holds the leaves only. A balanced tree\'s paths all have its depth d bits (header byte 9) and the stream length follows from the block count; an unbalanced tree\'s stream is preceded by its byte length N (uint32). A stream that ends inside a path, and more than 7 bits or non-zero bits after the last path, are refused.',
  residual:
    'Each block holds one index per stage, stage s in `cw_stage_bits[s]` bits, in stage order; stage s\'s codewords are rows `cw_stage_offset[s]` onwards of `cw_codewords`. The block is the sum of its stage codewords, added in int32 (see *Fixed point*). Non-zero padding after the last block is refused.',
} as const;

/**
 * The tree as the C table holds it: internal nodes renumbered 0.. in node order, leaves as −1 − (their row among the
 * leaves, in node order). `root` is 0, or −1 when the root itself is the only leaf.
 */
function compactTree(children: Int32Array, size: number): { internal: number; children: Int32Array; root: number; leaves: number[] } {
  const id = new Int32Array(size);
  const leaves: number[] = [];
  let internal = 0;
  for (let n = 0; n < size; n += 1) {
    if (children[2 * n] === -1) {
      id[n] = -1 - leaves.length;
      leaves.push(n);
    } else {
      id[n] = internal;
      internal += 1;
    }
  }
  const out = new Int32Array(2 * internal);
  for (let n = 0; n < size; n += 1) {
    if (children[2 * n] === -1) continue;
    out[2 * id[n]] = id[children[2 * n]];
    out[2 * id[n] + 1] = id[children[2 * n + 1]];
  }
  return { internal, children: out, root: id[0] >= 0 ? 0 : -1, leaves };
}

/** The codeword rows the C table holds: a tree's leaves (in node order), every entry otherwise. */
function emittedRows(codebook: Codebook, table: FixedPointTable): Int32Array {
  const st = codebook.structure;
  if (st.kind !== 'tree') return table.values;
  const d = codebook.dimension;
  const { leaves } = compactTree(st.children, codebook.size);
  const out = new Int32Array(leaves.length * d);
  leaves.forEach((n, row) => out.set(table.values.subarray(n * d, (n + 1) * d), row * d));
  return out;
}

function codebookHeader(codebook: Codebook, patch: NonNullable<Codebook['patch']>, table: FixedPointTable, coding: IndexCoding): string {
  const meanBits = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  const sha = Buffer.from(codebook.checksum, 'hex');
  return `/*
 * Generated by Cellwright from the codebook with SHA-256 ${codebook.checksum}.
 * Do not edit: export the codebook again instead. Include it from cw_decode.c only (it defines the tables).
 * Structure: ${STRUCTURE_TEXT[codebook.structure.kind]}.
 * Codewords: ${emittedRows(codebook, table).length / codebook.dimension} x ${codebook.dimension} components${codebook.structure.kind === 'tree' ? ' (the leaves, in node order)' : ''}, row-major; component ((row * ${patch.width}) + column) * ${patch.channels} + channel.
 * Format: ${qFormatText(table)}.
 */
#ifndef CW_CODEBOOK_H
#define CW_CODEBOOK_H

#include <stdint.h>

#define CW_CB_COLOUR ${patch.color === 'rgb' ? 1 : 0}u /* 0 luma, 1 rgb */
#define CW_CB_CHANNELS ${patch.channels}u
#define CW_CB_PATCH_WIDTH ${patch.width}u
#define CW_CB_PATCH_HEIGHT ${patch.height}u
#define CW_CB_DIMENSION ${codebook.dimension}u
#define CW_CB_SIZE ${codebook.size}u
#define CW_CB_LAYOUT ${INDEX_LAYOUTS.indexOf(coding.layout)} /* 0 fixed, 1 huffman, 2 tree-path, 3 residual-stages */
#define CW_CB_HEADER_BITS ${coding.headerBits}u /* header byte 9: index bits, longest code, tree depth or total stage bits */
#define CW_CB_STAGES ${coding.stages}u /* header byte 69: residual stages, else 0 */
#define CW_CB_ROWS_PER_BLOCK ${coding.perBlock}u /* table rows summed per block */
#define CW_CB_VARIABLE ${coding.bitsPerBlock === null ? 1 : 0} /* 1: each segment's index stream is preceded by its length */
#define CW_CB_MEAN_BITS ${meanBits} /* 0: no mean removal */
#define CW_CB_FRACTION_BITS ${table.fractionBits} /* F of the Q format; 0 for uint8 */

typedef ${C_TYPES[table.type]} cw_codeword_t;

static const uint8_t cw_codebook_sha256[32] = {
${tableRows(Int32Array.from(sha), 16)}
};

static const cw_codeword_t cw_codewords[${emittedRows(codebook, table).length}] = {
${tableRows(emittedRows(codebook, table), Math.max(1, Math.min(16, codebook.dimension)))}
};
${structureTables(codebook)}
#endif
`;
}

function readme(codebook: Codebook, patch: NonNullable<Codebook['patch']>, table: FixedPointTable): string {
  const meanBits = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  const sumText = codebook.structure.kind === 'residual' ? ' Residual stages: c is the sum of the block\'s stage entries, in int32 (eight int16 stages stay below 2^19).' : '';
  const pixelRule =
    table.type === 'uint8'
      ? 'Each entry is already the decoded pixel value: the studio rounds every codeword component half up and clamps it to 0..255, exactly what its own decoder does to a pixel, so this decoder reproduces the studio\'s output byte for byte.'
      : meanBits > 0
        ? `Each entry v is a residual r = v / 2^F (F = ${table.fractionBits}) around the block mean.${sumText} With the block's m-bit mean code q (m = ${meanBits}), the pixel is clamp(c / 2^F + (2q + 1) · 255 / 2^(m+1), 0, 255) rounded half up. The decoder computes the sum exactly in int32 units of 2^-(F+m+1), so it reproduces, byte for byte, the studio's decoder run with these rounded codewords; the cost of the rounding itself against the float codewords is what \`cellwright export\` prints.${table.saturated > 0 ? ` ${table.saturated} components did not fit ${table.type} and were saturated.` : ''}`
        : `Each entry v stands for v / 2^F (F = ${table.fractionBits}).${sumText} The pixel is clamp(c / 2^F, 0, 255) rounded half up, computed exactly in integers as (c + 2^(F-1)) >> F, so it reproduces, byte for byte, the studio's decoder run with these rounded codewords; the cost of the rounding against the float codewords is what \`cellwright export\` prints.${table.saturated > 0 ? ` ${table.saturated} components did not fit ${table.type} and were saturated.` : ''}`;
  return `# Cellwright reference decoder

A decoder in portable C99 for images coded with one codebook (SHA-256 \`${codebook.checksum}\`):
${codebook.size} codewords of ${patch.width} × ${patch.height} ${patch.color === 'rgb' ? 'RGB' : 'luma'} pixels${meanBits > 0 ? `, block means coded with ${meanBits} bits` : ''}; ${STRUCTURE_TEXT[codebook.structure.kind]}.
It allocates nothing, uses no floating point and keeps no global state.

## Build

    gcc -std=c99 -Wall -Wextra -O2 -o decode_file *.c

\`decode_file IN OUT\` decodes a coded file to a binary PGM (luma, P5) or PPM (RGB, P6) with maxval 255. It exits
0 when written, 1 with one message on stderr for a bad container (OUT is not written), 2 for wrong usage.

## Files

| file | what it is |
|---|---|
| \`cw_codebook.h\` | generated: geometry and layout macros, the codebook checksum, the codeword table and the structure's tables (Huffman code, tree children or stage offsets); included by \`cw_decode.c\` only |
| \`cw_decode.h\`, \`cw_decode.c\` | the decoder (the API below) |
| \`decode_file.c\` | the example program (it, not the decoder, uses the heap for the file and the image) |

## API (\`cw_decode.h\`)

    cw_status cw_read_info(const uint8_t *in, size_t in_len, cw_image_info *info);
    cw_status cw_decode(const uint8_t *in, size_t in_len, uint8_t *out, size_t out_cap, cw_image_info *info);
    const char *cw_status_message(cw_status status);

\`cw_read_info\` checks the header and fills \`info\` (width, height, channels, and \`bytes\` = width × height × channels,
the output size). \`cw_decode\` checks everything — every length, the CRC-32 of the payload, the markers, every index,
and that the file was coded with this codebook (checksum, patch, colour, mean bits, size, index layout) — before writing a pixel,
then writes rows top to bottom, pixels left to right, channels R, G, B interleaved. It never reads outside
\`in[0, in_len)\` nor writes outside \`out[0, info->bytes)\`. \`CW_OK\` is 0; each failure has its own code (see the
header), among them \`CW_ERR_COMPRESSED\` for a deflate or brotli payload and \`CW_ERR_INDEX\` for a code that names no
codeword.

## Container

Container versions 1 to 3 (this studio writes up to ${CONTAINER_VERSION}), raw payload only (coding byte 0): encode with
\`cellwright encode --payload raw\`, optionally \`--resync N\` for a resynchronisation marker (\`FF 52\` and the segment
number, uint16 little-endian) before every N block rows. All integers little-endian; the 68-byte header (72 bytes in
version 3) holds the magic \`CWVQ\`, version, coding, colour, patch size, index bits, mean bits, marker interval, width,
height, codebook size, the codebook's SHA-256, the payload length, its CRC-32 (ISO-HDLC) and the stored length;
version 3 adds the index layout (byte 68) and the residual stage count (byte 69). The payload is, per segment, the
blocks' index stream and then their mean codes (m bits, most significant bit first, zero-padded to a byte).
Images of more than 2^${Math.log2(MAX_BLOCKS)} blocks are refused. The studio's FORMAT.md is the full description.

## Structure: ${STRUCTURE_TEXT[codebook.structure.kind]}

${STRUCTURE_README[codebook.structure.kind]}

## Fixed point

Table type \`${C_TYPES[table.type]}\`: ${qFormatText(table)}.
${pixelRule}
`;
}

/**
 * The firmware bundle of a codebook: the generated codeword header, the reference decoder in C99, the example program
 * and a README. `residualWidth` chooses int8 or int16 storage for mean-removed codebooks (plain ones are uint8).
 */
export function buildFirmwareBundle(codebook: Codebook, residualWidth: ResidualWidth = 'int16'): FirmwareBundle {
  const patch = codebook.patch;
  if (!patch) throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', 'this codebook was trained on raw vectors and has no patch geometry, so no image decoder can be built for it');
  const table = fixedPointTable(codebook, residualWidth);
  const coding = indexCodingOf(codebook);
  const files: BundleFile[] = [
    { name: 'README.md', text: readme(codebook, patch, table) },
    { name: 'cw_codebook.h', text: codebookHeader(codebook, patch, table, coding) },
    { name: 'cw_decode.h', text: CW_DECODE_H },
    { name: 'cw_decode.c', text: CW_DECODE_C },
    { name: 'decode_file.c', text: DECODE_FILE_C },
  ];
  return { files, table };
}
