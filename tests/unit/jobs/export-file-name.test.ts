import { describe, expect, it } from 'vitest';
import { exportFileName } from '../../../server/services/codebooks';

describe('exportFileName', () => {
  it('keeps a plain run name', () => {
    expect(exportFileName('sweep_4x4.luma', 6)).toBe('sweep_4x4.luma-b6.cellwright.json');
  });

  it('folds spaces, quotes, slashes and accents so the header cannot be broken out of', () => {
    expect(exportFileName('Récif "nord" / passe 2', 3)).toBe('Recif-nord-passe-2-b3.cellwright.json');
    expect(exportFileName('../../etc/passwd', 1)).toBe('etc-passwd-b1.cellwright.json');
  });

  it('falls back to a neutral name when nothing printable is left', () => {
    expect(exportFileName('///', 0)).toBe('codebook-b0.cellwright.json');
  });
});
