// The exported C decoder compiled with the system's gcc (scripts/ensure-gcc.sh installs Debian's when missing) and
// run on the studio's own containers: its output must match the engine's decoder byte for byte.
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  decode, encode, firmwareBundle, fixedPointCost, makeCodebook, parseCodebookJson, readContainer, reconstruct, shutdownEngineWorkers, withFixedPointCodewords,
  type Codebook, type PixelImage, type ResidualWidth,
} from '../../../server/engine';
import { buildDecoder, gcc, lcg, readNetpbm, requireGcc, runDecoder, SANITIZED, SANITIZER_ENV, STRICT } from '../../helpers/c-decoder';

let root: string;
afterAll(async () => {
  rmSync(root, { recursive: true, force: true });
  await shutdownEngineWorkers();
});

const training = { source: 'invented', vectorCount: 1, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };

interface Case {
  name: string;
  color: 'luma' | 'rgb';
  w: number;
  h: number;
  size: number;
  meanBits: number;
  residual?: ResidualWidth;
  /** codeword spread: plain books draw from [−10, 265] (so clamping is exercised), residuals from ±spread */
  spread?: number;
}

const CASES: Case[] = [
  { name: 'luma-plain-4x4-k256', color: 'luma', w: 4, h: 4, size: 256, meanBits: 0 },
  { name: 'luma-plain-2x3-k5', color: 'luma', w: 2, h: 3, size: 5, meanBits: 0 },
  { name: 'luma-plain-k1', color: 'luma', w: 2, h: 2, size: 1, meanBits: 0 },
  { name: 'rgb-plain-3x2-k37', color: 'rgb', w: 3, h: 2, size: 37, meanBits: 0 },
  { name: 'luma-mean4-4x4-k64-int16', color: 'luma', w: 4, h: 4, size: 64, meanBits: 4, residual: 'int16', spread: 70 },
  { name: 'rgb-mean8-2x2-k700-int8', color: 'rgb', w: 2, h: 2, size: 700, meanBits: 8, residual: 'int8', spread: 150 },
  { name: 'rgb-mean1-5x3-k2-int16', color: 'rgb', w: 5, h: 3, size: 2, meanBits: 1, residual: 'int16', spread: 200 },
];

function codebookFor(c: Case): Codebook {
  const channels = c.color === 'rgb' ? 3 : 1;
  const d = c.w * c.h * channels;
  const next = lcg(c.size * 131 + c.meanBits * 7 + d);
  const codewords = new Float32Array(c.size * d);
  for (let i = 0; i < codewords.length; i += 1) codewords[i] = c.meanBits > 0 ? (next() * 2 - 1) * (c.spread ?? 60) : next() * 275 - 10;
  const preprocessing = c.meanBits > 0 ? { kind: 'mean-removed' as const, meanBits: c.meanBits } : { kind: 'none' as const };
  return makeCodebook({ size: c.size, dimension: d, patch: { width: c.w, height: c.h, channels, color: c.color }, preprocessing, codewords, usage: new Uint32Array(c.size), training });
}

function imageFor(color: 'luma' | 'rgb', width: number, height: number, seed: number): PixelImage {
  const channels = color === 'rgb' ? 3 : 1;
  const next = lcg(seed);
  const pixels = new Float32Array(width * height * channels);
  for (let y = 0; y < height; y += 1) {
    for (let x = 0; x < width; x += 1) {
      for (let ch = 0; ch < channels; ch += 1) {
        // Smooth structure plus noise, whole numbers as decoded 8-bit images are.
        const v = 128 + 80 * Math.sin(x / 4 + ch) * Math.cos(y / 5) + 40 * (next() - 0.5);
        pixels[(y * width + x) * channels + ch] = Math.max(0, Math.min(255, Math.round(v)));
      }
    }
  }
  return { name: `made-up-${width}x${height}`, width, height, color, channels, pixels };
}

const SIZES: [number, number][] = [[1, 1], [7, 5], [16, 16], [33, 18], [64, 41]];

interface Built {
  book: Codebook;
  fixedBook: Codebook;
  dir: string;
  strict: string;
  sanitized: string;
  containers: { file: string; bytes: Buffer; expected: Uint8Array; float: Uint8Array }[];
}

const built = new Map<string, Built>();

beforeAll(async () => {
  root = mkdtempSync(join(tmpdir(), 'cw-cdec-'));
  requireGcc();
  for (const c of CASES) {
    const book = codebookFor(c);
    const dir = join(root, c.name);
    mkdirSync(dir);
    const { strict, sanitized, table } = buildDecoder(book, dir, c.residual);
    const fixedBook = withFixedPointCodewords(book, table);
    const containers: Built['containers'] = [];
    for (const [i, [width, height]] of SIZES.entries()) {
      const image = imageFor(c.color, width, height, i + 1);
      for (const resyncRows of [0, 1, 3]) {
        const { container, encoded } = await encode(book, image, { payload: 'raw', resyncRows });
        const file = join(dir, `${width}x${height}-r${resyncRows}.cwvq`);
        writeFileSync(file, container);
        containers.push({ file, bytes: container, expected: reconstruct(fixedBook, encoded), float: decode(book, container).pixels });
      }
    }
    built.set(c.name, { book, fixedBook, dir, strict, sanitized, containers });
  }
}, 600_000);

describe('exported C decoder', () => {
  for (const c of CASES) {
    it(`decodes every container byte for byte as the engine does with the same table (${c.name}, -O2 and sanitizers)`, () => {
      const b = built.get(c.name)!;
      for (const { file, bytes, expected, float } of b.containers) {
        for (const [binary, sanitized] of [[b.strict, false], [b.sanitized, true]] as const) {
          const out = `${file}.${sanitized ? 'san' : 'o2'}.pnm`;
          const r = runDecoder(binary, file, out, sanitized);
          expect(r.stderr, file).toBe('');
          expect(r.status, file).toBe(0);
          const pnm = readNetpbm(out);
          const header = readContainer(b.book, bytes).header;
          expect([pnm.width, pnm.height, pnm.channels]).toEqual([header.width, header.height, c.color === 'rgb' ? 3 : 1]);
          expect(Buffer.from(pnm.pixels).equals(Buffer.from(expected)), file).toBe(true);
          // Plain codebooks: the table is the decoder's own rounding, so the float decoder's output is reproduced too.
          if (c.meanBits === 0) expect(Buffer.from(pnm.pixels).equals(Buffer.from(float)), file).toBe(true);
        }
      }
    });
  }

  it('returns an error for a few hundred seeded truncations and corruptions, with no sanitizer report', () => {
    const next = lcg(20261205);
    let rejected = 0;
    let accepted = 0;
    const picks = [...built.values()].flatMap((b) => b.containers.map((k) => ({ b, k })));
    for (let trial = 0; trial < 300; trial += 1) {
      const { b, k } = picks[Math.floor(next() * picks.length)];
      const kind = trial % 3;
      let bad: Buffer;
      if (kind === 0) {
        bad = Buffer.from(k.bytes.subarray(0, Math.floor(next() * k.bytes.length))); // truncated anywhere, header included
      } else {
        bad = Buffer.from(k.bytes);
        // kind 1: one to three bytes anywhere; kind 2: one flipped bit in the payload (or the header when it is empty)
        const flips = kind === 1 ? 1 + Math.floor(next() * 3) : 1;
        for (let f = 0; f < flips; f += 1) {
          const lo = kind === 2 && bad.length > 68 ? 68 : 0;
          const at = lo + Math.floor(next() * (bad.length - lo));
          bad[at] = kind === 1 ? Math.floor(next() * 256) : bad[at] ^ (1 << Math.floor(next() * 8));
        }
        if (bad.equals(k.bytes)) bad = Buffer.concat([bad, Buffer.from([0])]); // a "corruption" that changed nothing
      }
      const file = join(b.dir, `bad-${trial}.cwvq`);
      const out = join(b.dir, `bad-${trial}.pnm`);
      writeFileSync(file, bad);
      const r = runDecoder(b.sanitized, file, out, true);
      expect(r.stderr, `trial ${trial}`).not.toMatch(/Sanitizer|runtime error/);
      expect([0, 1], `trial ${trial}: ${r.stderr}`).toContain(r.status);
      if (r.status === 1) {
        rejected += 1;
        expect(r.stderr.split('\n').filter(Boolean), `trial ${trial}`).toHaveLength(1);
        expect(r.stderr).toMatch(/^decode_file: .*bad-\d+\.cwvq: /);
        continue;
      }
      // The header is outside the CRC: a change the format cannot see (say a width within the same blocks) decodes. Then
      // the studio's reader must accept it too and agree pixel for pixel.
      accepted += 1;
      const coded = readContainer(b.book, bad);
      const expected = reconstruct(b.fixedBook, coded);
      expect(Buffer.from(readNetpbm(out).pixels).equals(Buffer.from(expected)), `trial ${trial}`).toBe(true);
    }
    expect(rejected + accepted).toBe(300);
    // Truncations and payload bit flips (two thirds of the trials) are always caught by the lengths and the CRC-32.
    expect(rejected).toBeGreaterThanOrEqual(200);
  });

  it('names the reason in one line: compressed payload, another codebook, damaged marker, CRC, truncation', async () => {
    const b = built.get('luma-plain-4x4-k256')!;
    const other = built.get('luma-plain-2x3-k5')!;
    const image = imageFor('luma', 33, 18, 9);
    const cases: [string, Buffer, RegExp][] = [];
    cases.push(['packed', (await encode(b.book, image, { payload: 'packed' })).container, /reads raw payloads only/]);
    cases.push(['other', other.containers[3].bytes, /coded with a different codebook/]);
    const marked = Buffer.from(b.containers.find((k) => k.file.endsWith('33x18-r1.cwvq'))!.bytes);
    // 33×18 in 4×4 blocks: 9 blocks a row at 8 bits, so the first marker sits at payload bytes 9..12.
    marked[68 + 9] = 0xfe;
    const { crc32 } = await import('node:zlib');
    marked.writeUInt32LE(crc32(marked.subarray(68)), 60);
    cases.push(['marker', marked, /resynchronisation marker is damaged/]);
    const crc = Buffer.from(b.containers[6].bytes);
    crc[crc.length - 1] ^= 1;
    cases.push(['crc', crc, /CRC-32 does not match/]);
    cases.push(['short', b.containers[6].bytes.subarray(0, 60), /truncated/]);
    for (const [name, bytes, message] of cases) {
      const file = join(b.dir, `reason-${name}.cwvq`);
      writeFileSync(file, bytes);
      const r = runDecoder(b.sanitized, file, join(b.dir, `reason-${name}.pnm`), true);
      expect(r.status, name).toBe(1);
      expect(r.stderr, name).toMatch(message);
    }
  });

  it('decodes the committed version 1 file (from before version 2) to the pixels it decoded to when written', () => {
    const fixtures = new URL('../../fixtures/container-v1/', import.meta.url);
    const book = parseCodebookJson(readFileSync(new URL('codebook.json', fixtures), 'utf8'));
    const dir = join(root, 'v1');
    mkdirSync(dir);
    const bundle = firmwareBundle(book);
    for (const f of bundle.files) writeFileSync(join(dir, f.name), f.text);
    gcc([...SANITIZED, '-o', 'decode_file', 'cw_decode.c', 'decode_file.c'], dir);
    const r = runDecoder(join(dir, 'decode_file'), new URL('image.cwvq', fixtures).pathname, join(dir, 'v1.ppm'), true);
    expect(r.stderr).toBe('');
    // Its residuals are multiples of 1/4, exact in the Q5.10 table, so the float decoder's pixels come out.
    expect(bundle.table.fractionBits).toBe(10);
    expect(Buffer.from(readNetpbm(join(dir, 'v1.ppm')).pixels).equals(readFileSync(new URL('decoded.rgb', fixtures)))).toBe(true);
  });

  it('is written in the basic source character set (ASCII), as portable C99 needs', () => {
    for (const b of built.values()) {
      for (const name of ['cw_codebook.h', 'cw_decode.h', 'cw_decode.c', 'decode_file.c']) {
        expect(/[^\x09\x0a\x20-\x7e]/.test(readFileSync(join(b.dir, name), 'latin1')), name).toBe(false);
      }
    }
  });

  it('allocates nothing and uses no floating point (compiled with general registers only, no allocator symbol)', () => {
    const b = built.get('rgb-mean8-2x2-k700-int8')!;
    const flags = process.arch === 'x64' || process.arch === 'arm64' ? ['-mgeneral-regs-only'] : [];
    gcc([...STRICT, ...flags, '-c', 'cw_decode.c', '-o', 'cw_decode.o'], b.dir);
    const undefinedSymbols = execFileSync('nm', ['-u', join(b.dir, 'cw_decode.o')], { encoding: 'utf8' });
    expect(undefinedSymbols).not.toMatch(/\b(malloc|calloc|realloc|free|alloca)\b/);
  });

  it('reports the API\'s buffer and argument errors without touching memory it was not given', () => {
    const b = built.get('rgb-plain-3x2-k37')!;
    const harness = `#include <stdio.h>
#include <stdlib.h>
#include "cw_decode.h"
int main(int argc, char **argv) {
  FILE *f = fopen(argv[1], "rb"); long n; uint8_t *in; uint8_t *out; cw_image_info info; int a, b2, c, d, e;
  (void)argc; fseek(f, 0, SEEK_END); n = ftell(f); fseek(f, 0, SEEK_SET);
  in = malloc((size_t)n); if (fread(in, 1, (size_t)n, f) != (size_t)n) return 3; fclose(f);
  if (cw_read_info(in, (size_t)n, &info) != CW_OK) return 4;
  out = malloc(info.bytes);
  a = cw_decode(in, (size_t)n, out, info.bytes - 1, &info);
  b2 = cw_decode(in, (size_t)n, NULL, info.bytes, &info);
  c = cw_decode(in, (size_t)n - 1, out, info.bytes, &info);
  d = cw_decode(NULL, (size_t)n, out, info.bytes, &info);
  e = cw_decode(in, (size_t)n, out, info.bytes, &info);
  printf("%d %d %d %d %d %lu\\n", a, b2, c, d, e, (unsigned long)info.bytes);
  free(in); free(out); return 0;
}
`;
    writeFileSync(join(b.dir, 'harness.c'), harness);
    gcc([...SANITIZED, '-o', 'harness', 'harness.c', 'cw_decode.c'], b.dir);
    const k = b.containers.find((x) => x.file.endsWith('33x18-r0.cwvq'))!;
    const r = spawnSync(join(b.dir, 'harness'), [k.file], { encoding: 'utf8', env: SANITIZER_ENV });
    expect(r.stderr).toBe('');
    // CW_ERR_BUFFER 13, CW_ERR_ARGUMENT 1, CW_ERR_TRUNCATED 3, CW_ERR_ARGUMENT 1, CW_OK 0; 33 × 18 × 3 bytes
    expect(r.stdout).toBe(`13 1 3 1 0 ${33 * 18 * 3}\n`);
  });
});

describe('fixed-point rounding cost', () => {
  it('is zero for plain codebooks, whose table reproduces the float decoder', async () => {
    const b = built.get('rgb-plain-3x2-k37')!;
    const images = [imageFor('rgb', 33, 18, 4), imageFor('rgb', 16, 16, 5)];
    const cost = await fixedPointCost(b.book, firmwareBundle(b.book).table, images);
    expect(cost.differing).toBe(0);
    expect(cost.costDb).toBe(0);
    expect(cost.psnrFixed).toBe(cost.psnrFloat);
  });

  it('measures the PSNR lost by the residual table against the float decoder, per image and pooled', async () => {
    const b = built.get('rgb-mean8-2x2-k700-int8')!;
    const table = firmwareBundle(b.book, { residual: 'int8' }).table;
    const images = [imageFor('rgb', 33, 18, 4), imageFor('rgb', 64, 41, 5)];
    const cost = await fixedPointCost(b.book, table, images);
    // Worked out here from the two decoders' outputs: squared errors pooled over every component.
    let [sseFloat, sseFixed, n, differing] = [0, 0, 0, 0];
    for (const image of images) {
      const { encoded } = await encode(b.book, image);
      const a = reconstruct(b.book, encoded);
      const f = reconstruct(withFixedPointCodewords(b.book, table), encoded);
      for (let i = 0; i < a.length; i += 1) {
        sseFloat += (image.pixels[i] - a[i]) ** 2;
        sseFixed += (image.pixels[i] - f[i]) ** 2;
        if (a[i] !== f[i]) differing += 1;
      }
      n += a.length;
    }
    expect(differing).toBeGreaterThan(0); // residuals drawn from ±150 at int8: F = 0, whole numbers and saturation
    expect(table).toMatchObject({ type: 'int8', fractionBits: 0 });
    expect(table.saturated).toBeGreaterThan(0);
    expect(cost.differing).toBe(differing);
    expect(cost.psnrFloat).toBeCloseTo(10 * Math.log10((255 * 255 * n) / sseFloat), 10);
    expect(cost.psnrFixed).toBeCloseTo(10 * Math.log10((255 * 255 * n) / sseFixed), 10);
    expect(cost.costDb).toBeCloseTo(cost.psnrFloat - cost.psnrFixed, 12);
  });
});
