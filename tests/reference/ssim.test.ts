import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { ssimGrey, ssimOfImages } from '../../server/engine/metrics/ssim';

// The pair and its expected values come from the ssim.js package's own test fixture (obartra/ssim,
// spec/helpers/imageSamples.json, MIT), whose values were produced by Wang's reference ssim.m
// (Wang, Bovik, Sheikh, Simoncelli, IEEE TIP 13(4), 2004). Copied into tests/fixtures with its source lines.
const fixture = JSON.parse(readFileSync(new URL('../fixtures/ssim-24x18.json', import.meta.url), 'utf8')) as {
  original: number[][];
  degraded: number[][];
  expected_mssim: Record<string, number>;
};
const width = fixture.original[0].length;
const height = fixture.original.length;
const original = Uint8Array.from(fixture.original.flat());
const degraded = Uint8Array.from(fixture.degraded.flat());

describe('SSIM (Wang et al. 2004) through ssim.js in its original mode', () => {
  it('matches the reference ssim.m mean SSIM 0.46275 with K1 = 0.01, K2 = 0.03', () => {
    // Source: ssim.m output recorded in the ssim.js fixture; published to 5 decimals, so tolerance 5e-6.
    expect(fixture.expected_mssim['K1=0.01,K2=0.03']).toBe(0.46275);
    expect(Math.abs(ssimGrey(original, degraded, width, height)! - 0.46275)).toBeLessThanOrEqual(5e-6);
  });

  it('matches the reference ssim.m mean SSIM 0.45166 with K1 = K2 = 0', () => {
    // Source: same fixture, K1 = K2 = 0 case (the universal quality index special case).
    expect(Math.abs(ssimGrey(original, degraded, width, height, { k1: 0, k2: 0 })! - 0.45166)).toBeLessThanOrEqual(5e-6);
  });

  it('gives exactly 1 for identical images', () => {
    // Definition (Wang et al. 2004, eq. 13): SSIM(x, x) = 1 for every window.
    expect(ssimGrey(original, original, width, height)).toBe(1);
  });

  it('is symmetric in its two arguments', () => {
    // Definition (Wang et al. 2004): SSIM(x, y) = SSIM(y, x).
    expect(ssimGrey(degraded, original, width, height)).toBeCloseTo(ssimGrey(original, degraded, width, height)!, 12);
  });

  it('reads grey images given as luma floats the same as their 8-bit form', () => {
    const asFloat = Float32Array.from(original, (v) => v + 0.2);
    expect(ssimOfImages(asFloat, degraded, width, height, 1)).toBe(ssimGrey(original, degraded, width, height));
  });

  it('returns null below the 11 × 11 window instead of a meaningless number', () => {
    const tiny = new Uint8Array(10 * 10);
    expect(ssimGrey(tiny, tiny, 10, 10)).toBeNull();
  });
});
