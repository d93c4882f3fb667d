import { readFileSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { codebookJsonSchemaText, CODEBOOK_JSON_SCHEMA_PATH } from '../../../server/engine/format/codebook-json-schema';
import { FLOAT32_MAX, makeCodebook, parseCodebookJson, serializeCodebook, shortestFloat32, type Codebook } from '../../../server/engine/format/codebook-schema';
import { codewordChecksum } from '../../../server/engine/format/checksum';

function sample(): Codebook {
  return makeCodebook({
    size: 3,
    dimension: 4,
    patch: { width: 2, height: 2, channels: 1, color: 'luma' },
    preprocessing: { kind: 'mean-removed', meanBits: 6 },
    codewords: Float32Array.from([0.1, -2.5, 3, 4, 5, 6, 7, 8, 1e-7, 255, 12.3456789, -0]),
    usage: Uint32Array.from([10, 0, 5]),
    training: { source: 'corpus/', vectorCount: 15, init: 'split', epsilon: 1e-4, seed: 7, iterations: 4, distortion: 1.25, trace: [{ size: 1, iteration: 1, distortion: 3, emptyRepaired: 0, elapsedMs: 0.5 }] },
  });
}

/** The parts of a codebook document the malformation cases edit. */
interface EditableDoc {
  format: string;
  version: number;
  bits: number;
  patch: { width: number; color: string };
  preprocessing: { meanBits: number };
  codewords: (number | string)[][];
  usage: number[];
  training: { init: string; source: string; maxIterations?: number; trace: { size: number; iteration: number; distortion: number; emptyRepaired: number; elapsedMs: number }[] };
  checksum: string;
}

function mutated(edit: (doc: EditableDoc) => void): string {
  const doc = JSON.parse(serializeCodebook(sample()));
  edit(doc);
  return JSON.stringify(doc);
}

describe('codebook JSON', () => {
  it('round-trips codewords bit for bit, with usage, patch and training intact', () => {
    const original = sample();
    const back = parseCodebookJson(serializeCodebook(original));
    expect(back.codewords).toEqual(original.codewords);
    expect(back.usage).toEqual(original.usage);
    expect(back).toMatchObject({ bits: 2, size: 3, dimension: 4, patch: original.patch, preprocessing: original.preprocessing, training: original.training });
  });

  it('computes the checksum as SHA-256 (FIPS 180-4) of the float32 little-endian codeword bytes', () => {
    // Reference: node:crypto's SHA-256 over bytes laid out by hand — 1.0f is 00 00 80 3f, −2.0f is 00 00 00 c0 (IEEE 754 binary32).
    const bytes = Buffer.from([0x00, 0x00, 0x80, 0x3f, 0x00, 0x00, 0x00, 0xc0]);
    expect(codewordChecksum(Float32Array.from([1, -2]))).toBe(createHash('sha256').update(bytes).digest('hex'));
    // Published SHA-256 of the empty message (FIPS 180-4 examples): e3b0c442…b855.
    expect(codewordChecksum(new Float32Array(0))).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855');
  });

  it('writes each float32 as the shortest decimal that reads back to it', () => {
    expect(shortestFloat32(Math.fround(0.1))).toBe(0.1);
    expect(shortestFloat32(Math.fround(12.3456789))).toBe(12.345679);
    expect(serializeCodebook(sample())).toContain('[0.1,-2.5,3,4]');
  });

  it.each([
    ['a non-finite codeword value', (d: EditableDoc) => (d.codewords[2][3] = 'NaN'), 'codewords[2][3]: expected a finite number'],
    ['a short codeword', (d: EditableDoc) => d.codewords[1].pop(), 'codewords[1]: expected 4 numbers (dimension), got 3'],
    ['a missing codeword', (d: EditableDoc) => d.codewords.pop(), 'codewords: expected 3 codewords (size), got 2'],
    ['a dimension that does not fit the patch', (d: EditableDoc) => (d.patch.width = 4), 'dimension: expected 8 (patch width × height × channels)'],
    ['channels that contradict the colour', (d: EditableDoc) => (d.patch.color = 'rgb'), 'patch.channels: expected 3 for color "rgb"'],
    ['bits that do not match the size', (d: EditableDoc) => (d.bits = 5), 'bits: expected 2 (ceil(log2 3))'],
    ['bits out of range', (d: EditableDoc) => (d.bits = 15), 'bits: expected an integer ≤ 14'],
    ['a usage list of the wrong length', (d: EditableDoc) => d.usage.push(1), 'usage: expected 3 counts (size), got 4'],
    ['a wrong format tag', (d: EditableDoc) => (d.format = 'something-else'), 'format: expected "cellwright-codebook"'],
    ['a later version', (d: EditableDoc) => (d.version = 3), 'version: expected 1 or 2'],
    ['mean bits out of range', (d: EditableDoc) => (d.preprocessing.meanBits = 9), 'preprocessing.meanBits: expected an integer ≤ 8'],
    ['an unknown init', (d: EditableDoc) => (d.training.init = 'magic'), 'training.init: expected "split", "kmeans++" or "random"'],
    ['a negative trace distortion', (d: EditableDoc) => (d.training.trace[0].distortion = -1), 'training.trace[0].distortion: expected a number ≥ 0'],
    ['a malformed checksum', (d: EditableDoc) => (d.checksum = 'abc'), 'checksum: expected 64 lowercase hex digits'],
    // Finite as float64, infinite as float32 (IEEE 754 binary32 overflows at 2^128 − 2^103 under round to nearest).
    ['a codeword value beyond float32', (d: EditableDoc) => (d.codewords[1][2] = 1e39), 'codewords[1][2]: expected a number finite as float32'],
    ['a negative codeword value beyond float32', (d: EditableDoc) => (d.codewords[0][0] = -3.5e38), 'codewords[0][0]: expected a number finite as float32'],
    ['a source longer than 4096 characters', (d: EditableDoc) => (d.training.source = 'x'.repeat(4097)), 'training.source: expected at most 4096 characters'],
    ['a maxIterations above 1000', (d: EditableDoc) => (d.training.maxIterations = 1001), 'training.maxIterations: expected an integer ≤ 1000'],
    [
      'a trace longer than its sizes and iterations allow',
      (d: EditableDoc) => {
        // bits 2 and maxIterations 3: at most (2 + 1) sizes × (3 + 1) passes = 12 entries.
        d.training.maxIterations = 3;
        d.training.trace = Array.from({ length: 13 }, (_, i) => ({ size: 1, iteration: i % 4, distortion: 1, emptyRepaired: 0, elapsedMs: 0 }));
      },
      'training.trace: expected at most 12 entries ((bits 2 + 1) sizes × (maxIterations 3 + 1) passes), got 13',
    ],
    [
      'a trace longer than any document may hold',
      (d: EditableDoc) => (d.training.trace = Array.from({ length: 15016 }, () => ({ size: 1, iteration: 0, distortion: 1, emptyRepaired: 0, elapsedMs: 0 }))),
      'training.trace: expected at most 15015 entries',
    ],
    ['a checksum of other codewords', (d: EditableDoc) => (d.codewords[0][0] = 0.2), 'checksum: does not match the codewords'],
  ])('rejects %s and names the field', (_what, edit, message) => {
    expect(() => parseCodebookJson(mutated(edit))).toThrow(message);
  });

  it('accepts a trace at the bound its sizes and iterations allow', () => {
    const doc = JSON.parse(serializeCodebook(sample()));
    doc.training.maxIterations = 3;
    doc.training.trace = Array.from({ length: 12 }, (_, i) => ({ size: 2 ** Math.floor(i / 4), iteration: i % 4, distortion: 1, emptyRepaired: 0, elapsedMs: 0 }));
    expect(parseCodebookJson(JSON.stringify(doc)).training.trace).toHaveLength(12);
  });

  it('round-trips the largest finite float32 values, which are written above them as float64', () => {
    // FLT_MAX = (2 − 2^−23) · 2^127 (IEEE 754 binary32); its shortest decimal 3.4028235e38 exceeds it as a float64.
    const edge = makeCodebook({ ...sample(), codewords: Float32Array.from([FLOAT32_MAX, -FLOAT32_MAX, 1.4e-45, 0, 1, 2, 3, 4, 5, 6, 7, 8]) });
    const text = serializeCodebook(edge);
    expect(text).toContain('[3.4028235e+38,-3.4028235e+38,1e-45,0]');
    const back = parseCodebookJson(text);
    expect(back.codewords).toEqual(edge.codewords);
    expect(back.checksum).toBe(edge.checksum);
  });

  it('rejects text that is not JSON as such', () => {
    expect(() => parseCodebookJson('{"format": ')).toThrow(/codebook: not valid JSON/);
  });

  it('has a committed JSON Schema that is current with the zod schema', () => {
    // Stale? Regenerate with: node --import tsx server/engine/format/codebook-json-schema.ts
    expect(readFileSync(CODEBOOK_JSON_SCHEMA_PATH, 'utf8')).toBe(codebookJsonSchemaText());
    const schema = JSON.parse(codebookJsonSchemaText());
    expect(schema.required).toEqual(expect.arrayContaining(['format', 'version', 'bits', 'size', 'dimension', 'patch', 'preprocessing', 'codewords', 'usage', 'training', 'checksum']));
    expect(schema.properties.structure.oneOf.map((s: { properties: { kind: { const: string } } }) => s.properties.kind.const)).toEqual(['full', 'entropy-constrained', 'tree', 'residual']);
  });
});

/** A codebook of `size` 1-component codewords 0, 1, 2, … with the given structure. */
function structured(size: number, structure: Codebook['structure']): Codebook {
  return makeCodebook({
    size,
    dimension: 4,
    patch: { width: 2, height: 2, channels: 1, color: 'luma' },
    preprocessing: { kind: 'none' },
    codewords: Float32Array.from({ length: size * 4 }, (_, i) => i),
    usage: new Uint32Array(size).fill(1),
    training: { source: 'made up', vectorCount: size, init: 'split', epsilon: 0, seed: 1, iterations: 0, distortion: 0, trace: [] },
    structure,
  });
}

function docOf(book: Codebook): Record<string, unknown> & { structure: Record<string, unknown> } {
  return JSON.parse(serializeCodebook(book));
}

describe('codebook JSON revision 2: the structure', () => {
  it('writes revision 2 with {"kind":"full"} for a full-search codebook', () => {
    const doc = docOf(sample());
    expect(doc.version).toBe(2);
    expect(doc.structure).toEqual({ kind: 'full' });
  });

  it('reads a revision 1 file, written before structures existed, as a full-search codebook', () => {
    const text = readFileSync(new URL('../../fixtures/container-v1/codebook.json', import.meta.url), 'utf8');
    expect(JSON.parse(text).version).toBe(1);
    const book = parseCodebookJson(text);
    expect(book.structure).toEqual({ kind: 'full' });
    // Re-exported as revision 2 with the same codewords and checksum.
    const again = parseCodebookJson(serializeCodebook(book));
    expect(again.checksum).toBe(book.checksum);
    expect(docOf(book).version).toBe(2);
  });

  it('refuses a structure in revision 1 and its absence in revision 2', () => {
    const v1 = { ...docOf(sample()), version: 1 };
    expect(() => parseCodebookJson(JSON.stringify(v1))).toThrow('structure: revision 1 has no structure member');
    const { structure: _gone, ...v2 } = docOf(sample());
    expect(() => parseCodebookJson(JSON.stringify(v2))).toThrow('structure: expected a structure (revision 2)');
  });

  it('round-trips every kind of structure', () => {
    const books = [
      structured(3, { kind: 'entropy-constrained', lambda: 12.5, codeLengths: Uint8Array.from([1, 2, 2]) }),
      structured(3, { kind: 'tree', balanced: true, children: Int32Array.from([1, 2, -1, -1, -1, -1]) }),
      structured(5, { kind: 'tree', balanced: false, children: Int32Array.from([1, 2, 3, 4, -1, -1, -1, -1, -1, -1]) }),
      structured(6, { kind: 'residual', bits: [2, 1], search: { kind: 'm-best', m: 4 } }),
    ];
    for (const book of books) expect(parseCodebookJson(serializeCodebook(book)).structure).toEqual(book.structure);
  });

  const ecvq = () => docOf(structured(3, { kind: 'entropy-constrained', lambda: 1, codeLengths: Uint8Array.from([1, 2, 2]) }));
  const tree = () => docOf(structured(5, { kind: 'tree', balanced: false, children: Int32Array.from([1, 2, 3, 4, -1, -1, -1, -1, -1, -1]) }));
  const residual = () => docOf(structured(6, { kind: 'residual', bits: [2, 1], search: { kind: 'greedy' } }));
  it.each([
    // Kraft's inequality (Cover & Thomas, Elements of Information Theory, Thm 5.2.1): 2^−1 + 2^−1 + 2^−2 = 1.25 > 1.
    ['Huffman lengths that break Kraft\'s inequality', ecvq, (s: Record<string, unknown>) => (s.codeLengths = [1, 1, 2]), 'structure.codeLengths: the lengths over-subscribe the code space (Σ 2^−l = 1.25 > 1'],
    ['a Huffman length above the maximum of 16', ecvq, (s: Record<string, unknown>) => (s.codeLengths = [1, 2, 17]), 'structure.codeLengths[2]: expected an integer ≤ 16'],
    ['a codeword without a Huffman length', ecvq, (s: Record<string, unknown>) => (s.codeLengths = [1, 1]), 'structure.codeLengths: expected 3 code lengths (one per codeword), got 2'],
    ['a negative λ', ecvq, (s: Record<string, unknown>) => (s.lambda = -1), 'structure.lambda: expected a number ≥ 0'],
    ['a node with one child', tree, (s: Record<string, unknown>) => (s.children = [1, 2, 3, -1, -1, -1, -1, -1, -1, -1]), 'structure.children[3]: node 1 has one child'],
    ['children out of breadth-first order', tree, (s: Record<string, unknown>) => (s.children = [2, 1, 3, 4, -1, -1, -1, -1, -1, -1]), "structure.children[0]: node 0's children are 2 and 1; breadth-first order makes them 1 and 2"],
    ['a node no other node reaches', tree, (s: Record<string, unknown>) => (s.children = [1, 2, -1, -1, -1, -1, -1, -1, -1, -1]), "structure.children: node 3 is no node's child"],
    ['a children list of the wrong length', tree, (s: Record<string, unknown>) => (s.children = [1, 2, -1, -1]), 'structure.children: expected 10 entries (two per node), got 4'],
    ['an unbalanced tree called balanced', tree, (s: Record<string, unknown>) => (s.balanced = true), 'structure.balanced: the leaves lie at depths other than 2'],
    ['stages that do not fill the table', residual, (s: Record<string, unknown>) => (s.bits = [2, 2]), 'structure.bits: stages of 2^2 + 2^2 = 8 codewords; the table holds 6'],
    ['an M-best search with M = 0', residual, (s: Record<string, unknown>) => (s.search = { kind: 'm-best', m: 0 }), 'structure.search'],
    ['an unknown kind', residual, (s: Record<string, unknown>) => (s.kind = 'lattice'), 'structure.kind'],
  ])('rejects %s', (_what, make, edit, message) => {
    const doc = make();
    edit(doc.structure);
    expect(() => parseCodebookJson(JSON.stringify(doc))).toThrow(message);
  });
});
