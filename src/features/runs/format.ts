import { EXACT, type JobSummary } from '../../../server/contracts';

const thin = '\u2009';

export const formatBpp = (v: number) => `${v.toFixed(3)}${thin}bpp`;
/** A null PSNR is an exact reconstruction (zero MSE), spelled as EXACT says for text. */
export const formatDb = (v: number | null | undefined) => (v == null ? EXACT.text : `${v.toFixed(2)}${thin}dB`);
export const formatMse = (v: number) => (v >= 100 ? v.toFixed(1) : v.toPrecision(3));
export const formatSsim = (v: number | null | undefined) => (v == null ? '—' : v.toFixed(4));
export const formatBytes = (v: number) => `${v.toLocaleString('en-GB')}${thin}bytes`;


/**
 * The workers that computed a job, as people read them: "Computed on vm-1 (3f2a9c1e)", several joined with commas.
 * The host names the machine; the start of the worker id tells two workers on one host apart. Null before any served it.
 */
export function servedByText(servedBy: JobSummary['servedBy']): string | null {
  const unique = [...new Map(servedBy.map((w) => [w.workerId, w])).values()];
  if (unique.length === 0) return null;
  return `Computed on ${unique.map((w) => `${w.host} (${w.workerId.slice(0, 8)})`).join(', ')}`;
}
