import { describe, expect, it } from 'vitest';
import type { PixelImage } from '../../../server/engine/io/image';
import { extractTrainingVectors, parsePatchShape, proportionalQuotas, tile, untile } from '../../../server/engine/io/patches';

function ramp(width: number, height: number, channels: 1 | 3 = 1, name = 'ramp'): PixelImage {
  const pixels = new Float32Array(width * height * channels);
  for (let i = 0; i < pixels.length; i += 1) pixels[i] = i;
  return { name, width, height, channels, color: channels === 3 ? 'rgb' : 'luma', pixels };
}

/** Deterministic stand-in generator cycling through a list, so sampled positions can be worked out by hand. */
function listRng(values: number[]) {
  let i = 0;
  return { nextInt: (n: number) => values[i++ % values.length] % n };
}

describe('patch shapes', () => {
  it('parses WxH, including non-square shapes', () => {
    expect(parsePatchShape('4x4')).toEqual({ width: 4, height: 4 });
    expect(parsePatchShape('8x2')).toEqual({ width: 8, height: 2 });
    expect(parsePatchShape('3')).toEqual({ width: 3, height: 3 });
  });

  it('rejects sides outside 2..16 and malformed text with the field named', () => {
    expect(() => parsePatchShape('1x4')).toThrow(/patch width must be an integer from 2 to 16, got 1/);
    expect(() => parsePatchShape('4x17')).toThrow(/patch height/);
    expect(() => parsePatchShape('four')).toThrow(/WxH/);
  });
});

describe('tiling for coding', () => {
  it('orders components by row, then column, then channel (worked example on a 4×2 ramp, 2×2 patches)', () => {
    // Pixels 0..7 laid out as rows [0 1 2 3] and [4 5 6 7]; block 0 holds 0,1,4,5 and block 1 holds 2,3,6,7.
    const t = tile(ramp(4, 2), { width: 2, height: 2 });
    expect(t).toMatchObject({ blocksX: 2, blocksY: 1, dimension: 4 });
    expect(Array.from(t.vectors)).toEqual([0, 1, 4, 5, 2, 3, 6, 7]);
  });

  it('interleaves R, G, B per pixel in rgb vectors', () => {
    // 2×2 rgb ramp: pixel p has channels 3p, 3p+1, 3p+2.
    const t = tile(ramp(2, 2, 3), { width: 2, height: 2 });
    expect(Array.from(t.vectors)).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11]);
  });

  it('pads the right and bottom edges by replicating the last column and row (worked example, 3×3 image, 2×2 patches)', () => {
    // Rows [0 1 2] [3 4 5] [6 7 8]; block (1,0) = 2,2,5,5; block (0,1) = 6,7,6,7; block (1,1) = 8,8,8,8.
    const t = tile(ramp(3, 3), { width: 2, height: 2 });
    expect(t).toMatchObject({ blocksX: 2, blocksY: 2 });
    expect(Array.from(t.vectors)).toEqual([0, 1, 3, 4, 2, 2, 5, 5, 6, 7, 6, 7, 8, 8, 8, 8]);
  });

  it('crops the padding again so untile inverts tile on odd sizes and non-square patches', () => {
    for (const [w, h, pw, ph, c] of [[7, 5, 2, 3, 1], [13, 11, 4, 4, 3], [5, 9, 16, 2, 1]] as const) {
      const image = ramp(w, h, c);
      const t = tile(image, { width: pw, height: ph });
      const back = untile(t.vectors, w, h, c, { width: pw, height: ph }, new Float32Array(w * h * c));
      expect(back).toEqual(image.pixels);
    }
  });
});

describe('training extraction', () => {
  it('takes every patch position at the given stride (worked example: 6×4 image, 2×2 patches, stride 1 → 5 × 3)', () => {
    const out = extractTrainingVectors([ramp(6, 4)], { width: 2, height: 2 }, { stride: 1 });
    expect(out.count).toBe(15);
    // Position (1, 0) holds pixels 1, 2, 7, 8.
    expect(Array.from(out.vectors.subarray(4, 8))).toEqual([1, 2, 7, 8]);
  });

  it('defaults the stride to the patch size, giving non-overlapping patches', () => {
    const out = extractTrainingVectors([ramp(6, 4)], { width: 3, height: 2 });
    expect(out.count).toBe(4);
    expect(Array.from(out.vectors.subarray(6, 12))).toEqual([3, 4, 5, 9, 10, 11]);
  });

  it('spreads a sample cap over images in proportion to their area', () => {
    const big = ramp(40, 40, 1, 'big'); // area 1600, 400 positions at 2×2
    const small = ramp(20, 20, 1, 'small'); // area 400, 100 positions
    const seq = Array.from({ length: 1000 }, (_, i) => (i * 7919) % 10007);
    const out = extractTrainingVectors([big, small], { width: 2, height: 2 }, { sample: 100, rng: listRng(seq) });
    expect(out.perImage).toEqual([80, 20]);
    expect(out.count).toBe(100);
  });

  it('draws the same sample for the same random sequence and distinct positions within an image', () => {
    const seq = [5, 3, 99, 0, 42, 17, 8, 1];
    const a = extractTrainingVectors([ramp(12, 12)], { width: 2, height: 2 }, { sample: 8, rng: listRng(seq) });
    const b = extractTrainingVectors([ramp(12, 12)], { width: 2, height: 2 }, { sample: 8, rng: listRng(seq) });
    expect(a.vectors).toEqual(b.vectors);
    const firsts = new Set<number>();
    for (let v = 0; v < a.count; v += 1) firsts.add(a.vectors[v * 4]);
    expect(firsts.size).toBe(8);
  });

  it('splits quotas by largest remainder and moves what a capped image cannot take to the others', () => {
    expect(proportionalQuotas(10, [1, 1, 1], [10, 10, 10])).toEqual([4, 3, 3]);
    expect(proportionalQuotas(10, [8, 1, 1], [2, 10, 10])).toEqual([2, 4, 4]);
    expect(proportionalQuotas(50, [1, 1], [5, 5])).toEqual([5, 5]);
  });

  it('rejects a zero stride and mixed colour modes', () => {
    expect(() => extractTrainingVectors([ramp(4, 4)], { width: 2, height: 2 }, { stride: 0 })).toThrow(/stride/);
    expect(() => extractTrainingVectors([ramp(4, 4), ramp(4, 4, 3)], { width: 2, height: 2 })).toThrow(/mixed colour/);
  });
});
