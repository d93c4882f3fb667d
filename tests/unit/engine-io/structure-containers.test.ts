import { readFileSync } from 'node:fs';
import { crc32 } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import {
  canonicalCode, codedBits, decode, encode, entropyBits, huffmanCodeLengths, makeCodebook, parseCodebookJson, reconstruct, shutdownEngineWorkers, trainEcvq,
  type Codebook, type CodebookStructure, type EncodedImage, type PixelImage,
} from '../../../server/engine';
import { HEADER_BYTES_V3, readContainer, readContainerHeader, STREAM_LENGTH_BYTES, writeContainer } from '../../../server/engine/format/container';
import { tile } from '../../../server/engine/io/patches';

afterAll(() => shutdownEngineWorkers());

const patch = { width: 2, height: 2, channels: 1 as const, color: 'luma' as const };
const training = { source: 'hand-made', vectorCount: 4, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };

/** A table of `size` flat 2×2 codewords at 10, 20, 30, … with the given structure. */
function flatBook(size: number, structure: CodebookStructure, meanBits = 0): Codebook {
  const codewords = new Float32Array(size * 4);
  for (let j = 0; j < size; j += 1) codewords.fill(10 * (j + 1), j * 4, j * 4 + 4);
  const preprocessing = meanBits > 0 ? { kind: 'mean-removed' as const, meanBits } : { kind: 'none' as const };
  return makeCodebook({ size, dimension: 4, patch, preprocessing, codewords, usage: new Uint32Array(size), training, structure });
}

/** A coded image of `blocksX` × `blocksY` 2×2 blocks with the given indices. */
function coded(blocksX: number, blocksY: number, indices: number[], meanCodes: number[] | null = null): EncodedImage {
  return { width: 2 * blocksX, height: 2 * blocksY, blocksX, blocksY, indices: Uint32Array.from(indices), meanCodes: meanCodes && Uint8Array.from(meanCodes) };
}

const payloadOf = (file: Buffer) => file.subarray(HEADER_BYTES_V3);

describe('container version 3: tree-path indices', () => {
  // Balanced to depth 2: node 0 → 1, 2; node 1 → 3, 4; node 2 → 5, 6 (breadth-first); leaves 3..6 have paths 00, 01, 10, 11.
  const balanced = flatBook(7, { kind: 'tree', balanced: true, children: Int32Array.from([1, 2, 3, 4, 5, 6, -1, -1, -1, -1, -1, -1, -1, -1]) });
  // Unbalanced: node 0 → 1, 2; node 1 → 3, 4; leaves 2 ("1"), 3 ("00"), 4 ("01").
  const unbalanced = flatBook(5, { kind: 'tree', balanced: false, children: Int32Array.from([1, 2, 3, 4, -1, -1, -1, -1, -1, -1]) });

  it('writes a balanced tree\'s path in b bits per block, without a length prefix', () => {
    const file = writeContainer(balanced, coded(2, 1, [3, 6]));
    expect(readContainerHeader(file)).toMatchObject({ version: 3, layout: 'tree-path', indexBits: 2, stages: 0, codebookSize: 7, headerBytes: 72, coding: 'raw' });
    // Paths 00 and 11, MSB first, zero-padded: 0011 0000.
    expect([...payloadOf(file)]).toEqual([0b0011_0000]);
    const back = readContainer(balanced, file);
    expect([...back.indices]).toEqual([3, 6]);
    // Table lookup: each block is its leaf's codeword (40 and 70).
    expect([...reconstruct(balanced, back)]).toEqual([40, 40, 70, 70, 40, 40, 70, 70]);
  });

  it('writes an unbalanced tree\'s variable-length paths after their byte length', () => {
    const file = writeContainer(unbalanced, coded(4, 1, [2, 3, 4, 2]));
    expect(readContainerHeader(file)).toMatchObject({ layout: 'tree-path', indexBits: 2 });
    // 1 · 00 · 01 · 1 → 1000 1100, one byte, after its length 1 (uint32 LE).
    expect([...payloadOf(file)]).toEqual([1, 0, 0, 0, 0b1000_1100]);
    expect([...readContainer(unbalanced, file).indices]).toEqual([2, 3, 4, 2]);
  });

  it('refuses an internal node as a block\'s index, on writing and on reading', () => {
    expect(() => writeContainer(unbalanced, coded(1, 1, [1]))).toThrow(/node 1, which is not a leaf/);
    const file = Buffer.from(writeContainer(unbalanced, coded(4, 1, [2, 3, 4, 2])));
    file[HEADER_BYTES_V3 + 4] = 0b1000_1101; // non-zero padding after the last path
    expect(() => readContainer(unbalanced, fixCrc(file))).toThrow(/padding after the tree-path stream is not zero/);
  });
});

describe('container version 3: residual stage indices', () => {
  // Stage 0: 2 bits (table 0..3), stage 1: 1 bit (table 4..5).
  const book = flatBook(6, { kind: 'residual', bits: [2, 1], search: { kind: 'greedy' } });

  it('writes S stage indices per block, bits[s] each, and decodes to the sum of the stage codewords', () => {
    const file = writeContainer(book, coded(2, 1, [1, 5, 3, 4]));
    expect(readContainerHeader(file)).toMatchObject({ layout: 'residual-stages', indexBits: 3, stages: 2 });
    // Block 0: 01 · 1; block 1: 11 · 0 → 0111 1000.
    expect([...payloadOf(file).subarray(0, 1)]).toEqual([0b0111_1000]);
    const back = readContainer(book, file);
    expect([...back.indices]).toEqual([1, 5, 3, 4]);
    // 20 + 60 = 80 and 40 + 50 = 90.
    expect([...reconstruct(book, back)]).toEqual([80, 80, 90, 90, 80, 80, 90, 90]);
  });

  it('refuses a stage index outside its stage', () => {
    expect(() => writeContainer(book, coded(1, 1, [4, 5]))).toThrow(/stage 0 refers to codeword 4, the stage holds 0..3/);
  });
});

describe('container version 3: entropy-constrained (canonical Huffman) indices', () => {
  // Lengths 1, 2, 3, 3: canonical codes 0, 10, 110, 111 (RFC 1951 §3.2.2).
  const book = flatBook(4, { kind: 'entropy-constrained', lambda: 10, codeLengths: Uint8Array.from([1, 2, 3, 3]) }, 3);

  it('writes each block\'s canonical code after the stream\'s byte length, then the mean codes', () => {
    const file = writeContainer(book, coded(3, 1, [0, 2, 3], [1, 2, 7]));
    expect(readContainerHeader(file)).toMatchObject({ layout: 'huffman', indexBits: 3, coding: 'raw' });
    // 0 · 110 · 111 → 0110 1110 (7 bits + one zero pad bit); mean codes 001 010 111 → 0010 1011 1000 0000.
    expect([...payloadOf(file)]).toEqual([1, 0, 0, 0, 0b0110_1110, 0b0010_1011, 0b1000_0000]);
    const back = readContainer(book, file);
    expect([...back.indices]).toEqual([0, 2, 3]);
    expect([...back.meanCodes!]).toEqual([1, 2, 7]);
  });

  it('stores an entropy-coded stream raw under auto and refuses packing it again', () => {
    const image = coded(40, 1, Array.from({ length: 40 }, () => 0), Array(40).fill(0));
    expect(readContainerHeader(writeContainer(book, image)).coding).toBe('raw');
    expect(() => writeContainer(book, image, { payload: 'packed' })).toThrow(/already entropy-coded and is stored raw/);
  });

  it('keeps resynchronisation markers between segments', () => {
    const file = writeContainer(book, coded(2, 3, [0, 1, 2, 3, 1, 0], [0, 1, 2, 3, 4, 5]), { payload: 'raw', resyncRows: 1 });
    const back = readContainer(book, file);
    expect([...back.indices]).toEqual([0, 1, 2, 3, 1, 0]);
    expect([...back.meanCodes!]).toEqual([0, 1, 2, 3, 4, 5]);
  });

  it('refuses a truncated stream, an oversized length prefix and a file of another layout', () => {
    const file = Buffer.from(writeContainer(book, coded(3, 1, [0, 2, 3], [1, 2, 7])));
    const long = Buffer.from(file);
    long.writeUInt32LE(9, HEADER_BYTES_V3); // 9 bytes for 3 blocks of at most 3 bits
    expect(() => readContainer(book, fixCrc(long))).toThrow(/index stream of 9 bytes is longer than 3 blocks of at most 3 bits/);
    const cut = Buffer.from(file);
    cut[HEADER_BYTES_V3 + STREAM_LENGTH_BYTES] = 0b0110_1111; // the last code 111 now runs into a fourth symbol's bits
    expect(() => readContainer(book, fixCrc(cut))).toThrow(/Huffman index stream: the padding after the last symbol is not zero/);
    const other = flatBook(4, { kind: 'entropy-constrained', lambda: 10, codeLengths: Uint8Array.from([2, 2, 2, 2]) }, 3);
    const foreign = Buffer.from(file);
    foreign.write(other.checksum, 24, 32, 'hex');
    // Same codewords, other lengths: the checksum matches, the header's index bits (3 against 2) do not.
    expect(() => readContainer(other, foreign)).toThrow(/index layout \(huffman, 3 bits\) is not this entropy-constrained codebook's \(huffman, 2 bits\)/);
  });
});

/** Rewrites the payload CRC-32 after an edit, so the check under test is the one that fails. */
function fixCrc(file: Buffer): Buffer {
  const header = readContainerHeader(file);
  const payload = file.subarray(header.headerBytes);
  // Node's zlib crc32 is the ISO-HDLC CRC-32 the container uses (FORMAT.md).
  file.writeUInt32LE(crc32(payload), 60);
  return file;
}

describe('entropy-constrained coding end to end', () => {
  /** A smooth luma image with texture, 64 × 48. */
  function picture(seed: number): PixelImage {
    const width = 64;
    const height = 48;
    const pixels = new Float32Array(width * height);
    let s = seed;
    for (let y = 0; y < height; y += 1) {
      for (let x = 0; x < width; x += 1) {
        s = (s * 1103515245 + 12345) % 2 ** 31;
        pixels[y * width + x] = 128 + 60 * Math.sin(x / 7 + seed) * Math.cos(y / 5) + ((s >> 16) % 24);
      }
    }
    return { name: `picture-${seed}`, width, height, color: 'luma', channels: 1, pixels };
  }

  it('round-trips an ECVQ codebook\'s container, and its payload is exactly the Huffman code of the indices', async () => {
    const train = tile(picture(1), patch);
    const start = train.vectors.slice(0, 16 * 4);
    const result = await trainEcvq(train.vectors, 4, start, { lambda: 200 });
    const book = makeCodebook({
      size: result.size, dimension: 4, patch, preprocessing: { kind: 'none' }, codewords: result.codewords, usage: result.usage, training,
      structure: { kind: 'entropy-constrained', lambda: result.lambda, codeLengths: result.codeLengths },
    });
    const image = picture(2);
    const { container, encoded, reconstruction } = await encode(book, image);
    expect(Buffer.from(decode(book, container).pixels).equals(Buffer.from(reconstruction))).toBe(true);
    // Header, the 4-byte length and the code: Σ ℓ(index) bits, zero-padded to a byte (canonicalCode: RFC 1951 §3.2.2).
    const usage = new Uint32Array(book.size);
    for (const j of encoded.indices) usage[j] += 1;
    const bits = codedBits(canonicalCode(book.structure.kind === 'entropy-constrained' ? book.structure.codeLengths : []).lengths, usage);
    expect(container.length).toBe(HEADER_BYTES_V3 + STREAM_LENGTH_BYTES + Math.ceil(bits / 8));
    // Any prefix code spends at least the entropy of what it codes (Cover & Thomas, Elements of Information Theory, Thm 5.3.1).
    expect(bits / encoded.indices.length).toBeGreaterThanOrEqual(entropyBits(usage) - 1e-12);
    // On the training vectors the Huffman code of their own usage is within one bit of their entropy (ibid., Thm 5.4.1).
    expect(result.codedBitsPerVector).toBeGreaterThanOrEqual(result.entropy - 1e-12);
    expect(result.codedBitsPerVector).toBeLessThan(result.entropy + 1);
    expect(huffmanCodeLengths(result.usage)).toEqual(result.codeLengths);
  });
});

describe('container version 2, written before version 3 existed', () => {
  const dir = new URL('../../fixtures/container-v2/', import.meta.url);
  // Written by the previous writer (an invented revision 1 codebook, mean-removed, markers every 2 block rows).
  const book = parseCodebookJson(readFileSync(new URL('codebook.json', dir), 'utf8'));
  const fixture = readFileSync(new URL('image.cwvq', dir));

  it('still decodes to the pixels it decoded to when written', () => {
    expect(readContainerHeader(fixture)).toMatchObject({ version: 2, resyncRows: 2, layout: 'fixed', headerBytes: 68 });
    expect(Buffer.from(decode(book, fixture).pixels).equals(readFileSync(new URL('decoded.grey', dir)))).toBe(true);
  });

  it('is what the writer still writes for a full-search codebook with markers, byte for byte', async () => {
    const [width, height] = [9, 7];
    const pixels = new Float32Array(width * height);
    for (let i = 0; i < pixels.length; i += 1) pixels[i] = (i * 71) % 256; // the fixture's own image
    const { container } = await encode(book, { name: 'fixture', width, height, color: 'luma', channels: 1, pixels }, { payload: 'raw', resyncRows: 2 });
    expect(container.equals(fixture)).toBe(true);
  });
});
