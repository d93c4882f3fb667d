import { z } from 'zod';
import { BD_METHODS } from '../engine/vocabulary';

/**
 * Bjøntegaard deltas of a test curve against a reference curve (G. Bjøntegaard, ITU-T VCEG-M33, 2001), as the compare
 * page, a run's curve and the BD table give them: each figure with the interval it is averaged over and its method.
 */
const interval = z.tuple([z.number(), z.number()]).nullable();

export const bdValues = z.object({
  /** Percent rate change of the test curve at equal PSNR, averaged over `shared.psnr`; negative = fewer bits. */
  bdRate: z.number().nullable(),
  /** Mean PSNR change of the test curve at equal rate, averaged over `shared.bpp`, dB. */
  bdPsnr: z.number().nullable(),
  /** How the curves were drawn through their points. */
  method: z.enum(BD_METHODS),
  /** The intervals both curves cover, which the figures are averaged over: rate in bpp (BD-PSNR), PSNR in dB (BD-rate). */
  shared: z.object({ bpp: interval, psnr: interval }),
  /** Each shared interval as a fraction of the shorter curve's span (log rate for bpp), 0..1. */
  sharedFraction: z.object({ bpp: z.number(), psnr: z.number() }),
  /** True when a figure rests on less than BD_MIN_OVERLAP_FRACTION of the shorter curve: read it with care. */
  shortOverlap: z.boolean(),
  /** Why a value is null (different held-out images, too few points, no overlap). */
  reason: z.string().nullable(),
});
export type BdValues = z.infer<typeof bdValues>;
