import { z } from 'zod';
import { BD_METHODS, COLOR_MODES } from '../engine/vocabulary';
import { bdValues } from './bd';
import { codebookSummary } from './codebooks';
import { baselineCodec, baselineCurves, curvePoint, imageMetrics } from './evaluation';
import { pathId } from './common';
import { channelResponse } from './codebook-channel';

export const releaseStates = ['proposed', 'returned', 'approved'] as const;
export const releaseState = z.enum(releaseStates);
export type ReleaseStateName = z.infer<typeof releaseState>;

/** Lower-case letters and digits in words joined by one '-', '_' or '.', as in a file or package name. */
export const releaseName = z
  .string()
  .trim()
  .min(1)
  .max(64)
  .regex(/^[a-z0-9]+(?:[-_.][a-z0-9]+)*$/, 'Use lower-case letters and digits, words joined by "-", "_" or "." (e.g. edge-cam-luma)');
/**
 * A whole number ("3") or MAJOR.MINOR.PATCH with an optional pre-release after '-' (Semantic Versioning 2.0.0 §2 and
 * §9, without build metadata): numbers without leading zeros.
 */
export const releaseVersion = z
  .string()
  .trim()
  .min(1)
  .max(32)
  .regex(
    /^(?:0|[1-9][0-9]*)(?:\.(?:0|[1-9][0-9]*)\.(?:0|[1-9][0-9]*)(?:-[0-9A-Za-z]+(?:\.[0-9A-Za-z]+)*)?)?$/,
    'Use a whole number (3) or MAJOR.MINOR.PATCH (1.2.0, 1.0.0-rc.1)',
  );

export const releaseParams = z.object({ teamId: pathId, releaseId: pathId });
export const proposalParams = z.object({ teamId: pathId, codebookId: pathId });

/** POST /api/teams/:teamId/codebooks/:codebookId/proposal → 201 {release}: propose (or, after a return, propose again). */
export const proposeReleaseBody = z
  .object({
    name: releaseName,
    version: releaseVersion,
    note: z.string().trim().min(1, 'Say what the reviewer should look at').max(4000),
  })
  .strict();
export type ProposeReleaseBody = z.infer<typeof proposeReleaseBody>;

/** POST …/releases/:releaseId/approve (comment optional) and …/return (comment required: what to change). */
export const approveReleaseBody = z.object({ comment: z.string().trim().max(4000).optional() }).strict();
export const returnReleaseBody = z.object({ comment: z.string().trim().min(1, 'Say what should change').max(4000) }).strict();
export type ApproveReleaseBody = z.infer<typeof approveReleaseBody>;
export type ReturnReleaseBody = z.infer<typeof returnReleaseBody>;

const personRef = z.object({ id: z.number().int(), name: z.string() }).nullable();

export const releaseSummary = z.object({
  id: z.number().int(),
  codebookId: z.number().int(),
  codebookName: z.string(),
  runId: z.number().int().nullable(),
  state: releaseState,
  name: z.string(),
  version: z.string(),
  note: z.string(),
  proposedBy: personRef,
  proposedAt: z.string(),
  /** Who approved or returned it last, and when. */
  reviewedBy: personRef,
  reviewedAt: z.string().nullable(),
  /** Pinned at approval (null before): the codeword checksum, the held-out list's hash, when it was released. */
  checksum: z.string().nullable(),
  heldOutHash: z.string().nullable(),
  releasedAt: z.string().nullable(),
});
export type ReleaseSummary = z.infer<typeof releaseSummary>;

export const releaseComment = z.object({
  id: z.number().int(),
  kind: releaseState,
  body: z.string(),
  author: personRef,
  createdAt: z.string(),
});

export const releaseDetail = releaseSummary.extend({ thread: z.array(releaseComment) });
export type ReleaseDetail = z.infer<typeof releaseDetail>;

export const releasesResponse = z.object({ releases: z.array(releaseSummary) });
export const releaseResponse = z.object({ release: releaseDetail });
/** GET /api/teams/:teamId/codebooks/:codebookId/proposal: the codebook's review, null before it is proposed. */
export const codebookProposalResponse = z.object({ release: releaseDetail.nullable() });

/** A square of a held-out image, in pixels, with the released codebook's error on it. */
export const reportTile = z.object({
  imageId: z.number().int(),
  fileName: z.string(),
  imageWidth: z.number().int(),
  imageHeight: z.number().int(),
  x: z.number().int(),
  y: z.number().int(),
  width: z.number().int(),
  height: z.number().int(),
  mse: z.number(),
  /** null when the tile is reproduced exactly. */
  psnr: z.number().nullable(),
});

/**
 * GET /api/teams/:teamId/releases/:releaseId/report: everything the printable release report shows, computed from the
 * frozen codebook and its pinned evaluation. Each section is its own field, so a further one is one more field here
 * and one more section component in the page.
 */
export const releaseReportResponse = z.object({
  release: releaseDetail,
  codebook: codebookSummary,
  configuration: z.object({
    color: z.enum(COLOR_MODES),
    preprocessing: z.record(z.string(), z.unknown()),
    training: z.record(z.string(), z.unknown()),
  }),
  hashes: z.object({
    /** heldOutHash's rule over the run's training images; null for an imported codebook (its training data is not here). */
    trainingData: z.string().nullable(),
    heldOut: z.string(),
    trainingImages: z.number().int().nullable(),
    heldOutImages: z.number().int(),
  }),
  curve: z.object({
    /** The released codebook's point, and its run's other sizes (on the same held-out list) when it was trained here. */
    points: z.array(curvePoint),
    baselines: baselineCurves,
    bd: z.object({ method: z.enum(BD_METHODS), againstBaselines: z.array(bdValues.extend({ codec: baselineCodec })) }),
  }),
  images: z.array(imageMetrics),
  worstTiles: z.object({ tileSize: z.number().int(), tiles: z.array(reportTile), imagesMeasured: z.number().int() }),
  decoderCost: z.object({
    tableType: z.string(),
    fractionBits: z.number().int(),
    saturated: z.number().int(),
    /** Bytes of the firmware's codeword table (entries × element size). */
    tableBytes: z.number().int(),
    /** PSNR of the float decoder and of the fixed-point table on the held-out images (null when exact), and the cost in dB. */
    rounding: z.object({ psnrFloat: z.number().nullable(), psnrFixed: z.number().nullable(), costDb: z.number(), differing: z.number().int() }),
  }),
  checksums: z.object({
    codewords: z.string(),
    firmwareFiles: z.array(z.object({ name: z.string(), bytes: z.number().int(), sha256: z.string() })),
  }),
  /**
   * Channel robustness: PSNR against bit-error rate of the raw payload over a binary symmetric channel on the held-out
   * images (GET …/codebooks/:codebookId/channel at its defaults), or null with the reason it was not measured.
   */
  channel: z.object({ curve: channelResponse.nullable(), note: z.string().nullable() }),
});
export type ReleaseReport = z.infer<typeof releaseReportResponse>;
