import { describe, expect, it } from 'vitest';
import { tileErrors } from '../../../server/engine';

describe('tileErrors', () => {
  it('measures each tile of a hand-worked 5 × 2 grey image, cutting the last column of tiles to the image', () => {
    // Tiles of 2: columns 0–1, 2–3 and 4 (cut to 1 wide), both rows each.
    const original = [10, 10, 20, 20, 30, 10, 10, 20, 20, 30];
    const decoded = [10, 10, 22, 18, 27, 10, 10, 20, 20, 33];
    const tiles = tileErrors(original, decoded, 5, 2, 1, 2);
    // Squared errors: tile (0,0) 0; tile (2,0) 4 + 4 = 8 over 4 → 2; tile (4,0) 9 + 9 = 18 over 2 → 9.
    expect(tiles.map((t) => [t.x, t.y, t.width, t.height, t.mse])).toEqual([
      [4, 0, 1, 2, 9],
      [2, 0, 2, 2, 2],
      [0, 0, 2, 2, 0],
    ]);
    // PSNR = 10·log10(255² / MSE), the 8-bit peak; an exact tile is +∞.
    expect(tiles[0].psnr).toBeCloseTo(10 * Math.log10((255 * 255) / 9), 10);
    expect(tiles[2].psnr).toBe(Infinity);
  });

  it('averages over every channel of an RGB tile', () => {
    const original = [0, 0, 0, 0, 0, 0];
    const decoded = [3, 0, 0, 0, 0, 3];
    // One 2 × 1 tile of 6 components: (9 + 9) / 6 = 3.
    expect(tileErrors(original, decoded, 2, 1, 3, 4)).toEqual([expect.objectContaining({ x: 0, y: 0, width: 2, height: 1, mse: 3 })]);
  });

  it('refuses images of the wrong length and a tile size that is not a positive whole number', () => {
    expect(() => tileErrors([1, 2, 3], [1, 2, 3], 2, 2, 1, 2)).toThrow(RangeError);
    expect(() => tileErrors([1, 2, 3, 4], [1, 2, 3, 4], 2, 2, 1, 0)).toThrow(RangeError);
  });
});
