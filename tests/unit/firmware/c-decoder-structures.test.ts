// The exported C decoder for every codebook structure (entropy-constrained, balanced and unbalanced tree, residual
// stages; plain and mean-removed), compiled with the system's gcc (scripts/ensure-gcc.sh installs Debian's when
// missing) and run on version 3 containers the studio writes: its output must match the engine's decoder byte for byte.
import { execFileSync } from 'node:child_process';
import { crc32 } from 'node:zlib';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  decode, firmwareBundle, makeCodebook, readContainer, reconstruct, shutdownEngineWorkers, withFixedPointCodewords, writeContainer,
  type Codebook, type ResidualWidth,
} from '../../../server/engine';
import { buildDecoder, gcc, lcg, readNetpbm, requireGcc, runDecoder, STRICT } from '../../helpers/c-decoder';
import { balancedChildren, combChildren, encodedFor } from '../../helpers/structure-books';
import type { CodebookStructure } from '../../../server/engine/structures/types';

const training = { source: 'invented', vectorCount: 1, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };

interface Case {
  name: string;
  color: 'luma' | 'rgb';
  w: number;
  h: number;
  meanBits: number;
  residual?: ResidualWidth;
  structure: CodebookStructure;
  size: number;
}

const CASES: Case[] = [
  // Lengths 3..7, four of each: Σ 2^−l = 31/32, an incomplete code, so some bit patterns start no code.
  { name: 'ecvq-luma-plain-k20', color: 'luma', w: 4, h: 4, meanBits: 0, size: 20, structure: { kind: 'entropy-constrained', lambda: 10, codeLengths: Uint8Array.from({ length: 20 }, (_, i) => 3 + (i % 5)) } },
  // Lengths 1..8 and 8: a complete code (Σ 2^−l = 1) with codes longer than a byte.
  { name: 'ecvq-rgb-mean5-k9-int16', color: 'rgb', w: 2, h: 3, meanBits: 5, residual: 'int16', size: 9, structure: { kind: 'entropy-constrained', lambda: 3, codeLengths: Uint8Array.from([1, 2, 3, 4, 5, 6, 7, 8, 8]) } },
  { name: 'tree-balanced-luma-plain-d3', color: 'luma', w: 4, h: 4, meanBits: 0, size: 15, structure: { kind: 'tree', balanced: true, children: balancedChildren(3) } },
  { name: 'tree-comb-luma-mean4-d12-int8', color: 'luma', w: 3, h: 2, meanBits: 4, residual: 'int8', size: 25, structure: { kind: 'tree', balanced: false, children: combChildren(12) } },
  { name: 'residual-luma-plain-432-int16', color: 'luma', w: 4, h: 4, meanBits: 0, residual: 'int16', size: 28, structure: { kind: 'residual', bits: [4, 3, 2], search: { kind: 'greedy' } } },
  { name: 'residual-rgb-mean4-33-int8', color: 'rgb', w: 2, h: 2, meanBits: 4, residual: 'int8', size: 16, structure: { kind: 'residual', bits: [3, 3], search: { kind: 'greedy' } } },
];

function codebookFor(c: Case): Codebook {
  const channels = c.color === 'rgb' ? 3 : 1;
  const d = c.w * c.h * channels;
  const next = lcg(c.size * 977 + c.meanBits * 13 + d);
  const codewords = new Float32Array(c.size * d);
  const firstStage = c.structure.kind === 'residual' ? 2 ** c.structure.bits[0] * d : 0;
  for (let i = 0; i < codewords.length; i += 1) {
    // Plain tables draw from [−10, 265] so clamping is exercised; residuals (and later stages) are differences.
    const plain = c.meanBits === 0 && (c.structure.kind !== 'residual' || i < firstStage);
    codewords[i] = plain ? next() * 275 - 10 : (next() * 2 - 1) * 45;
  }
  const preprocessing = c.meanBits > 0 ? { kind: 'mean-removed' as const, meanBits: c.meanBits } : { kind: 'none' as const };
  return makeCodebook({ size: c.size, dimension: d, patch: { width: c.w, height: c.h, channels, color: c.color }, preprocessing, codewords, usage: new Uint32Array(c.size), training, structure: c.structure });
}


const SIZES: [number, number][] = [[1, 1], [7, 5], [33, 18], [64, 41]];

interface Built {
  book: Codebook;
  fixedBook: Codebook;
  dir: string;
  strict: string;
  sanitized: string;
  containers: { file: string; bytes: Buffer; expected: Uint8Array; float: Uint8Array }[];
}

let root: string;
const built = new Map<string, Built>();

beforeAll(() => {
  root = mkdtempSync(join(tmpdir(), 'cw-cdec3-'));
  requireGcc();
  for (const c of CASES) {
    const book = codebookFor(c);
    const dir = join(root, c.name);
    mkdirSync(dir);
    const { strict, sanitized, table } = buildDecoder(book, dir, c.residual);
    const fixedBook = withFixedPointCodewords(book, table);
    const containers: Built['containers'] = [];
    for (const [i, [width, height]] of SIZES.entries()) {
      const encoded = encodedFor(book, width, height, 31 * i + c.size);
      for (const resyncRows of [0, 1, 3]) {
        const bytes = writeContainer(book, encoded, { payload: 'raw', resyncRows });
        const file = join(dir, `${width}x${height}-r${resyncRows}.cwvq`);
        writeFileSync(file, bytes);
        containers.push({ file, bytes, expected: reconstruct(fixedBook, encoded), float: decode(book, bytes).pixels });
      }
    }
    built.set(c.name, { book, fixedBook, dir, strict, sanitized, containers });
  }
}, 600_000);

afterAll(async () => {
  rmSync(root, { recursive: true, force: true });
  await shutdownEngineWorkers();
});

describe('exported C decoder, every structure', () => {
  for (const c of CASES) {
    it(`decodes every version 3 container byte for byte as the engine does with the same table (${c.name}, -O2 and sanitizers)`, () => {
      const b = built.get(c.name)!;
      for (const { file, bytes, expected, float } of b.containers) {
        expect(bytes[4], file).toBe(3); // every structure but full search writes version 3
        for (const [binary, sanitized] of [[b.strict, false], [b.sanitized, true]] as const) {
          const out = `${file}.${sanitized ? 'san' : 'o2'}.pnm`;
          const r = runDecoder(binary, file, out, sanitized);
          expect(r.stderr, file).toBe('');
          expect(r.status, file).toBe(0);
          const pnm = readNetpbm(out);
          expect([pnm.width, pnm.height, pnm.channels]).toEqual([bytes.readUInt32LE(12), bytes.readUInt32LE(16), c.color === 'rgb' ? 3 : 1]);
          expect(Buffer.from(pnm.pixels).equals(Buffer.from(expected)), file).toBe(true);
          // Plain single-table codebooks store the decoder's own rounding, so the float decoder's output comes out too.
          if (bundleIsUnsigned(b)) expect(Buffer.from(pnm.pixels).equals(Buffer.from(float)), file).toBe(true);
        }
      }
    });
  }

  it('holds a tree\'s leaves only: 8 rows of the 15-node balanced tree, 13 of the 25-node comb', () => {
    const rows = (name: string) => readFileSync(join(built.get(name)!.dir, 'cw_codebook.h'), 'utf8').match(/cw_codewords\[(\d+)\]/)![1];
    expect(rows('tree-balanced-luma-plain-d3')).toBe(String(8 * 16));
    expect(rows('tree-comb-luma-mean4-d12-int8')).toBe(String(13 * 6));
  });

  it('holds residual stages in a signed table, and plain single-table structures in uint8', () => {
    const types = Object.fromEntries(CASES.map((c) => [c.name, firmwareBundle(built.get(c.name)!.book, { residual: c.residual }).table.type]));
    expect(types).toEqual({
      'ecvq-luma-plain-k20': 'uint8', 'ecvq-rgb-mean5-k9-int16': 'int16', 'tree-balanced-luma-plain-d3': 'uint8',
      'tree-comb-luma-mean4-d12-int8': 'int8', 'residual-luma-plain-432-int16': 'int16', 'residual-rgb-mean4-33-int8': 'int8',
    });
    // Stage 0 of a plain residual codebook reaches up to 265: 265 · 2^7 = 33920 does not fit int16, 265 · 2^6 does, so F = 6.
    expect(firmwareBundle(built.get('residual-luma-plain-432-int16')!.book, { residual: 'int16' }).table.fractionBits).toBe(6);
  });

  it('allocates nothing and uses no floating point for any structure (general registers only, no allocator symbol)', () => {
    const flags = process.arch === 'x64' || process.arch === 'arm64' ? ['-mgeneral-regs-only'] : [];
    for (const b of built.values()) {
      gcc([...STRICT, ...flags, '-c', 'cw_decode.c', '-o', 'cw_decode.o'], b.dir);
      const undefinedSymbols = execFileSync('nm', ['-u', join(b.dir, 'cw_decode.o')], { encoding: 'utf8' });
      expect(undefinedSymbols, b.dir).not.toMatch(/\b(malloc|calloc|realloc|free|alloca)\b/);
    }
  });

  it('returns an error for a few hundred seeded truncations and corruptions of version 3 containers, with no sanitizer report', () => {
    const next = lcg(20261206);
    let [rejected, accepted] = [0, 0];
    const picks = [...built.values()].flatMap((b) => b.containers.filter((k) => k.bytes.length > 80).map((k) => ({ b, k })));
    for (let trial = 0; trial < 300; trial += 1) {
      const { b, k } = picks[Math.floor(next() * picks.length)];
      const kind = trial % 3;
      let bad: Buffer;
      if (kind === 0) {
        bad = Buffer.from(k.bytes.subarray(0, Math.floor(next() * k.bytes.length))); // truncated anywhere, header included
      } else {
        bad = Buffer.from(k.bytes);
        // kind 1: one to three bytes anywhere; kind 2: one flipped bit in the payload with the CRC-32 made to match,
        // so the decoder's stream checks (lengths, codes, markers, padding) and not the CRC must catch it
        const flips = kind === 1 ? 1 + Math.floor(next() * 3) : 1;
        for (let f = 0; f < flips; f += 1) {
          const lo = kind === 2 ? 72 : 0;
          const at = lo + Math.floor(next() * (bad.length - lo));
          bad[at] = kind === 1 ? Math.floor(next() * 256) : bad[at] ^ (1 << Math.floor(next() * 8));
        }
        if (kind === 2) bad.writeUInt32LE(crc32(bad.subarray(72)), 60);
        if (bad.equals(k.bytes)) bad = Buffer.concat([bad, Buffer.from([0])]); // a "corruption" that changed nothing
      }
      const file = join(b.dir, `bad-${trial}.cwvq`);
      const out = join(b.dir, `bad-${trial}.pnm`);
      writeFileSync(file, bad);
      const r = runDecoder(b.sanitized, file, out, true);
      expect(r.stderr, `trial ${trial}`).not.toMatch(/Sanitizer|runtime error/);
      expect([0, 1], `trial ${trial}: ${r.stderr}`).toContain(r.status);
      let studio: Uint8Array | null = null;
      try {
        studio = reconstruct(b.fixedBook, readContainer(b.book, bad));
      } catch {
        studio = null;
      }
      if (r.status === 1) {
        rejected += 1;
        expect(r.stderr.split('\n').filter(Boolean), `trial ${trial}`).toHaveLength(1);
        expect(r.stderr).toMatch(/^decode_file: .*bad-\d+\.cwvq: /);
        // The C decoder refuses exactly what the studio's reader refuses.
        expect(studio, `trial ${trial}: ${r.stderr}`).toBeNull();
        continue;
      }
      // A change the format cannot see (a header width within the same blocks, a flipped bit that still forms valid
      // codes under a matching CRC) decodes; the studio's reader must accept it too and agree pixel for pixel.
      accepted += 1;
      expect(studio, `trial ${trial}`).not.toBeNull();
      expect(Buffer.from(readNetpbm(out).pixels).equals(Buffer.from(studio!)), `trial ${trial}`).toBe(true);
    }
    expect(rejected + accepted).toBe(300);
    // Every truncation is caught by the lengths; most corruptions by the CRC-32 or the stream checks.
    expect(rejected).toBeGreaterThanOrEqual(200); // 247 of 300 in this seeded run
  });
});

function bundleIsUnsigned(b: Built): boolean {
  return b.book.preprocessing.kind === 'none' && b.book.structure.kind !== 'residual';
}

describe('fixed-point rounding of residual stages', () => {
  it('moves a pixel by at most one level against the float stages, and the C decoder follows the fixed table', () => {
    const b = built.get('residual-luma-plain-432-int16')!;
    const table = firmwareBundle(b.book, { residual: 'int16' }).table;
    const encoded = encodedFor(b.book, 64, 41, 5);
    const floatOut = reconstruct(b.book, encoded);
    const fixedOut = reconstruct(withFixedPointCodewords(b.book, table), encoded);
    let differing = 0;
    for (let i = 0; i < floatOut.length; i += 1) {
      if (floatOut[i] !== fixedOut[i]) differing += 1;
      // At F = 6 each stored component is within 2^−7 of its float value, so three stages together move the sum by at
      // most 3 · 2^−7 < 1/2, and the rounded pixel by at most one level.
      expect(Math.abs(floatOut[i] - fixedOut[i])).toBeLessThanOrEqual(1);
    }
    expect(differing).toBeGreaterThan(0);
    // The C decoder's pixels are the fixed table's (checked above for every container), so this is the export's cost.
    expect(fixedPointTableCost(b)).toBeGreaterThan(0);
  });
});

/** Components on which the decoded containers differ between the float table and the fixed one. */
function fixedPointTableCost(b: Built): number {
  return b.containers.reduce((n, k) => n + k.expected.reduce((m, v, i) => m + (v !== k.float[i] ? 1 : 0), 0), 0);
}
