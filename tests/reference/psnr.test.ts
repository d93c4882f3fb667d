import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { formatPsnr, meanSquaredError, psnrForJson, psnrFromMse } from '../../server/engine/metrics/distortion';

// PSNR for 8-bit data, 10·log10(255²/MSE) (common practice). The dB values below were worked by hand:
// 10·log10(65025) = 48.1308; 10·log10(65025·12) = 58.9226 (MSE 1/12 is the error of rounding a uniform value).
describe('PSNR for 8-bit data', () => {
  it('gives 48.1308 dB for MSE = 1', () => {
    expect(psnrFromMse(1)).toBeCloseTo(48.1308, 4);
  });

  it('gives 58.9226 dB for MSE = 1/12', () => {
    expect(psnrFromMse(1 / 12)).toBeCloseTo(58.9226, 4);
  });

  it('gives 20.1328 dB for the ssim.js fixture pair, whose MSE is 630.669', () => {
    // Source: tests/fixtures/ssim-24x18.json ("also": mse 630.669, psnr_db 20.1328), the ssim.js package's test pair.
    const fixture = JSON.parse(readFileSync(new URL('../fixtures/ssim-24x18.json', import.meta.url), 'utf8')) as {
      original: number[][];
      degraded: number[][];
    };
    const mse = meanSquaredError(fixture.original.flat(), fixture.degraded.flat());
    expect(mse).toBeCloseTo(630.669, 3);
    expect(psnrFromMse(mse)).toBeCloseTo(20.1328, 4);
  });

  it('gives Infinity for identical images, shown as ∞ (exact) and written to JSON as null', () => {
    const a = [1, 2, 3, 250];
    const mse = meanSquaredError(a, [...a]);
    expect(mse).toBe(0);
    expect(psnrFromMse(mse)).toBe(Infinity);
    expect(formatPsnr(Infinity)).toBe('∞ (exact)');
    expect(psnrForJson(Infinity)).toBeNull();
    expect(JSON.stringify({ psnr: psnrForJson(psnrFromMse(mse)) })).toBe('{"psnr":null}');
  });
});
