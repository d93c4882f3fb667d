import { z } from 'zod';
import { BER, CHANNEL_SEEDS, DEFAULT_BERS, DEFAULT_REORDER_BER, MAX_BERS, STUDIO_REORDER_MAX_BITS } from '../engine/channel/limits';
import { RESIDUAL_WIDTHS } from '../engine/firmware/widths';
import { MAX_RESYNC_ROWS } from '../engine/format/limits';
import { codebookDetail } from './codebooks';

// Channel errors and index assignment (server/engine/channel) and the firmware bundle, for the studio. The limits are
// the engine's, defined once.
export { BER, CHANNEL_SEEDS, DEFAULT_BERS, DEFAULT_REORDER_BER, MAX_BERS, STUDIO_REORDER_MAX_BITS };

const NUMBER = /^(\d+\.?\d*|\.\d+)(e[+-]?\d+)?$/i;
/** Seeds per rate the studio computes while a request waits (the command line goes to CHANNEL_SEEDS.max). */
export const STUDIO_CHANNEL_SEEDS = Object.freeze({ min: CHANNEL_SEEDS.min, max: 16, default: CHANNEL_SEEDS.default });
/**
 * Most pixel decodes one studio curve may cost (images' pixels × seeds × rates): about a minute of one pool thread at
 * the 3 Mpx/s `npm run bench` measured for simulation and decoding, since the request waits for it. Larger sets
 * take fewer seeds or rates, or `cellwright channel`.
 */
export const STUDIO_CHANNEL_MAX_PIXEL_RUNS = 200_000_000;
const queryInt = (min: number, max: number) => z.string().regex(/^\d{1,10}$/, 'Expected a whole number').transform(Number).pipe(z.number().int().min(min).max(max));

/** GET /api/teams/:teamId/codebooks/:codebookId/channel?ber=1e-4,1e-3&seeds=5&resync=0&setId=… */
export const channelQuery = z
  .object({
    ber: z
      .string()
      .max(400)
      .transform((s) => s.split(','))
      .pipe(z.array(z.string().regex(NUMBER, 'Expected a number').transform(Number).pipe(z.number().min(BER.min).max(BER.max))).min(1).max(MAX_BERS))
      .optional(),
    seeds: queryInt(STUDIO_CHANNEL_SEEDS.min, STUDIO_CHANNEL_SEEDS.max).default(STUDIO_CHANNEL_SEEDS.default),
    resync: queryInt(0, MAX_RESYNC_ROWS).default(0),
    setId: queryInt(1, 2 ** 31 - 1).optional(),
  })
  .strict();
export type ChannelQuery = z.infer<typeof channelQuery>;

const psnr = z.number().nullable();
export const channelPoint = z.object({
  ber: z.number(),
  mse: z.number(),
  psnr,
  mseStdError: z.number(),
  expectedMse: z.number().nullable(),
  expectedPsnr: psnr,
  flips: z.number().int(),
  bits: z.number().int(),
});
export const channelResponse = z.object({
  codebookId: z.number().int(),
  images: z.number().int(),
  pixels: z.number().int(),
  payloadBytes: z.number().int(),
  rawBpp: z.number(),
  noiselessPsnr: psnr,
  resyncRows: z.number().int(),
  seeds: z.number().int(),
  expectedNote: z.string().nullable(),
  points: z.array(channelPoint),
});
export type ChannelResponse = z.infer<typeof channelResponse>;

/** POST /api/teams/:teamId/codebooks/:codebookId/reorder → 201 with the new codebook. */
export const reorderBody = z
  .object({
    ber: z.number().min(BER.min).max(BER.max).default(DEFAULT_REORDER_BER),
    name: z.string().trim().min(1).max(200).optional(),
  })
  .strict();
export type ReorderBody = z.infer<typeof reorderBody>;
export const reorderResponse = z.object({
  codebook: codebookDetail,
  ber: z.number(),
  channelDistortionBefore: z.number(),
  channelDistortionAfter: z.number(),
  swaps: z.number().int(),
});
export type ReorderResponse = z.infer<typeof reorderResponse>;

/** GET /api/teams/:teamId/codebooks/:codebookId/firmware?residual=int16 → the C bundle as a zip attachment. */
export const firmwareQuery = z.object({ residual: z.enum(RESIDUAL_WIDTHS).default('int16') }).strict();

/**
 * GET /api/teams/:teamId/codebooks/:codebookId/firmware/rounding?residual=int16&setId=… → what the firmware table's fixed
 * point costs on the held-out images (the run's, or a named set's) before the bundle is exported.
 */
export const roundingQuery = z
  .object({ residual: z.enum(RESIDUAL_WIDTHS).default('int16'), setId: queryInt(1, 2 ** 31 - 1).optional() })
  .strict();
export type RoundingQuery = z.infer<typeof roundingQuery>;
export const roundingResponse = z.object({
  codebookId: z.number().int(),
  images: z.number().int(),
  tableType: z.string(),
  fractionBits: z.number().int(),
  saturated: z.number().int(),
  /** Bytes of the firmware's codeword table (entries × element size). */
  tableBytes: z.number().int(),
  /** PSNR of the float decoder and of the fixed-point table (null when exact), and the difference in dB. */
  psnrFloat: psnr,
  psnrFixed: psnr,
  costDb: z.number(),
  /** Output values (pixel × channel) on which the two decoders differ. */
  differing: z.number().int(),
});
export type RoundingResponse = z.infer<typeof roundingResponse>;
