import { readFileSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { codebookJsonSchemaText, CODEBOOK_JSON_SCHEMA_PATH } from '../../../server/engine/format/codebook-json-schema';
import { makeCodebook, parseCodebookJson, serializeCodebook, shortestFloat32, type Codebook } from '../../../server/engine/format/codebook-schema';
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
  training: { init: string; trace: { distortion: number }[] };
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
    ['a later version', (d: EditableDoc) => (d.version = 2), 'version: expected 1'],
    ['mean bits out of range', (d: EditableDoc) => (d.preprocessing.meanBits = 9), 'preprocessing.meanBits: expected an integer ≤ 8'],
    ['an unknown init', (d: EditableDoc) => (d.training.init = 'magic'), 'training.init: expected "random", "kmeans++" or "split"'],
    ['a negative trace distortion', (d: EditableDoc) => (d.training.trace[0].distortion = -1), 'training.trace[0].distortion: expected a number ≥ 0'],
    ['a malformed checksum', (d: EditableDoc) => (d.checksum = 'abc'), 'checksum: expected 64 lowercase hex digits'],
    ['a checksum of other codewords', (d: EditableDoc) => (d.codewords[0][0] = 0.2), 'checksum: does not match the codewords'],
  ])('rejects %s and names the field', (_what, edit, message) => {
    expect(() => parseCodebookJson(mutated(edit))).toThrow(message);
  });

  it('rejects text that is not JSON as such', () => {
    expect(() => parseCodebookJson('{"format": ')).toThrow(/codebook: not valid JSON/);
  });

  it('has a committed JSON Schema that is current with the zod schema', () => {
    // Stale? Regenerate with: node --import tsx server/engine/format/codebook-json-schema.ts
    expect(readFileSync(CODEBOOK_JSON_SCHEMA_PATH, 'utf8')).toBe(codebookJsonSchemaText());
    const schema = JSON.parse(codebookJsonSchemaText());
    expect(schema.required).toEqual(expect.arrayContaining(['format', 'version', 'bits', 'size', 'dimension', 'patch', 'preprocessing', 'codewords', 'usage', 'training', 'checksum']));
  });
});
