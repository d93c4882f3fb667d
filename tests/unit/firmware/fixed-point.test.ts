import { describe, expect, it } from 'vitest';
import { fixedPointTable, makeCodebook, type Codebook } from '../../../server/engine';

const training = { source: 'invented', vectorCount: 1, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };

function book(values: number[], meanBits: number): Codebook {
  const preprocessing = meanBits > 0 ? { kind: 'mean-removed' as const, meanBits } : { kind: 'none' as const };
  return makeCodebook({
    size: values.length / 4, dimension: 4, patch: { width: 2, height: 2, channels: 1, color: 'luma' }, preprocessing,
    codewords: Float32Array.from(values), usage: new Uint32Array(values.length / 4), training,
  });
}

describe('fixed-point codeword table', () => {
  it('stores a plain codebook as the decoder rounds a pixel: clamped to 0..255, halves up', () => {
    const t = fixedPointTable(book([2.5, -0.4, 254.5, 300, 0.49, 127.5, -7, 3.5], 0));
    expect(t).toMatchObject({ type: 'uint8', fractionBits: 0, saturated: 0 });
    expect(Array.from(t.values)).toEqual([3, 0, 255, 255, 0, 128, 0, 4]);
  });

  it('gives residuals the most fraction bits that still fit: ±7 in int16 is Q3.12, ±0.9 in int8 is Q0.7', () => {
    const wide = fixedPointTable(book([-7, 6.99, 0.1, 1], 3), 'int16');
    expect(wide).toMatchObject({ type: 'int16', fractionBits: 12, saturated: 0 });
    // −7 · 4096 = −28672; 0.1 · 4096 = 409.6 → 410 (half up); the float32 nearest 6.99 times 4096 rounds to 28631.
    expect(Array.from(wide.values)).toEqual([-28672, 28631, 410, 4096]);
    const narrow = fixedPointTable(book([-0.9, 0.9, 0.5, -0.25], 3), 'int8');
    expect(narrow).toMatchObject({ type: 'int8', fractionBits: 7 });
    expect(Array.from(narrow.values)).toEqual([-115, 115, 64, -32]);
    expect(Array.from(narrow.codewords)).toEqual([-115 / 128, 115 / 128, 0.5, -0.25]);
  });

  it('saturates at F = 0 what int8 cannot hold, and counts it', () => {
    const t = fixedPointTable(book([-200, 150, 127.4, -128.4], 2), 'int8');
    expect(t).toMatchObject({ fractionBits: 0, saturated: 2 });
    expect(Array.from(t.values)).toEqual([-128, 127, 127, -128]);
  });
});
