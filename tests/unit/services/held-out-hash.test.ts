import { describe, expect, it } from 'vitest';
import { heldOutHash } from '../../../server/services/held-out-hash';

describe('heldOutHash', () => {
  it('is the SHA-256 of the one digest for a single image', () => {
    // FIPS 180-2, Appendix B.1: SHA-256("abc").
    expect(heldOutHash(['abc'])).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
  });

  it('does not depend on the order of the images', () => {
    const a = 'a'.repeat(64);
    const b = 'b'.repeat(64);
    const c = 'c'.repeat(64);
    expect(heldOutHash([c, a, b])).toBe(heldOutHash([a, b, c]));
    expect(heldOutHash([a, b])).not.toBe(heldOutHash([a, c]));
  });

  it('tells a list from the same list with an image repeated', () => {
    const a = 'a'.repeat(64);
    expect(heldOutHash([a, a])).not.toBe(heldOutHash([a]));
  });
});
