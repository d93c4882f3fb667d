import { EXACT } from '../../../server/contracts';

const thin = '\u2009';

export const formatBpp = (v: number) => `${v.toFixed(3)}${thin}bpp`;
export const formatDb = (v: number | null) => (v === null ? EXACT.text : `${v.toFixed(2)}${thin}dB`);
export const formatMse = (v: number) => (v >= 100 ? v.toFixed(1) : v.toPrecision(3));
export const formatBytes = (v: number) => `${v.toLocaleString('en-GB')}${thin}bytes`;

/** Fixed rate of a codebook: index bits plus mean bits per block, over the block's pixels (common practice). */
export function fixedRate(bits: number, meanBits: number, patch: { width: number; height: number }): number {
  return (bits + meanBits) / (patch.width * patch.height);
}
