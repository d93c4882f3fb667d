import { EXACT } from '../../../server/contracts';

const thin = '\u2009';

export const formatBpp = (v: number) => `${v.toFixed(3)}${thin}bpp`;
/** A null PSNR is an exact reconstruction (zero MSE), spelled as EXACT says for text. */
export const formatDb = (v: number | null | undefined) => (v == null ? EXACT.text : `${v.toFixed(2)}${thin}dB`);
export const formatMse = (v: number) => (v >= 100 ? v.toFixed(1) : v.toPrecision(3));
export const formatSsim = (v: number | null | undefined) => (v == null ? '—' : v.toFixed(4));
export const formatBytes = (v: number) => `${v.toLocaleString('en-GB')}${thin}bytes`;

