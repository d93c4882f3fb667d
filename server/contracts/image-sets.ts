import { z } from 'zod';
import { SEED } from '../engine/vocabulary';
import { idParam, pathId } from './common';

/** Training images teach the codebook; held-out images are only ever used to measure it. */
export const imageRoles = ['training', 'held-out'] as const;
export const imageRole = z.enum(imageRoles);
export type ImageRole = z.infer<typeof imageRole>;

export const imageFormat = z.enum(['png', 'jpeg', 'webp', 'tiff', 'avif', 'gif']);

export const image = z.object({
  id: z.number().int(),
  setId: z.number().int(),
  /** The name it was uploaded under (an archive entry keeps its path inside the archive); display only. */
  fileName: z.string(),
  sha256: z.string(),
  width: z.number().int(),
  height: z.number().int(),
  channels: z.number().int(),
  format: imageFormat,
  bytes: z.number().int(),
  role: imageRole,
  createdAt: z.string(),
});
export type Image = z.infer<typeof image>;

export const imageSet = z.object({
  id: z.number().int(),
  name: z.string(),
  description: z.string().nullable(),
  createdBy: z.number().int().nullable(),
  createdAt: z.string(),
  updatedAt: z.string(),
  counts: z.object({ total: z.number().int(), training: z.number().int(), heldOut: z.number().int() }),
});
export type ImageSet = z.infer<typeof imageSet>;

const setName = z.string().trim().min(1).max(120);
const setDescription = z.string().trim().max(2000);

export const imageSetParams = z.object({ teamId: pathId, setId: pathId });
export const imageParams = z.object({ teamId: pathId, imageId: pathId });

/** POST /api/teams/:teamId/image-sets (engineer, admin) → 201 {imageSet}; 409 when the team has a set of that name */
export const createImageSetBody = z.object({ name: setName, description: setDescription.optional() }).strict();

export const roleAssignment = z.object({ imageId: idParam, role: imageRole }).strict();

/**
 * PATCH /api/teams/:teamId/image-sets/:setId (engineer, admin) → 200 {imageSet}; rename, describe, and/or
 * give chosen images explicit roles (every image must belong to the set, or nothing changes: 400).
 */
export const updateImageSetBody = z
  .object({
    name: setName.optional(),
    description: setDescription.nullable().optional(),
    assignments: z.array(roleAssignment).min(1).max(10_000).optional(),
  })
  .strict()
  .refine((b) => b.name !== undefined || b.description !== undefined || b.assignments !== undefined, {
    message: 'Give at least one of name, description or assignments',
  });

/**
 * POST /api/teams/:teamId/image-sets/:setId/split (engineer, admin) → 200 {imageSet, images}: round(heldOutFraction · n)
 * images chosen by a seeded shuffle become held-out and the rest training; the same seed and images give the same split.
 */
export const splitImageSetBody = z
  .object({
    heldOutFraction: z.number().gt(0, 'heldOutFraction must be above 0').lt(1, 'heldOutFraction must be below 1'),
    // The run vocabulary's one seed range, as for runs and the CLI.
    seed: z.number().int().min(SEED.min).max(SEED.max),
  })
  .strict();

/** GET /api/teams/:teamId/image-sets/:setId/images?role=training|held-out */
export const listImagesQuery = z.object({ role: imageRole.optional() }).strict();

/** PATCH /api/teams/:teamId/images/:imageId (engineer, admin) → 200 {image} */
export const updateImageBody = z.object({ role: imageRole }).strict();

/** GET /api/teams/:teamId/image-sets */
export const imageSetsResponse = z.object({ imageSets: z.array(imageSet) });
/** GET, PATCH /api/teams/:teamId/image-sets/:setId; POST …/image-sets → 201 */
export const imageSetResponse = z.object({ imageSet });
/** GET /api/teams/:teamId/image-sets/:setId/images */
export const imagesResponse = z.object({ images: z.array(image) });
/** GET, PATCH /api/teams/:teamId/images/:imageId */
export const imageResponse = z.object({ image });
/** POST …/split */
export const splitResponse = z.object({ imageSet, images: z.array(image) });

export const uploadRejection = z.object({ file: z.string(), message: z.string() });
export type UploadRejection = z.infer<typeof uploadRejection>;

/**
 * POST /api/teams/:teamId/image-sets/:setId/images (engineer, admin), multipart, field `files` (images or .zip
 * archives) → 201 when at least one file was stored or already in the set; 400 {error.details: rejected} when none.
 * DELETE …/images/:imageId and …/image-sets/:setId (admin) → 204; 409 while a run uses the image(s).
 * GET …/images/:imageId/thumbnail (WebP or PNG, ETag = sha256) and …/images/:imageId/original (the stored bytes).
 */
export const uploadResponse = z.object({
  images: z.array(image),
  rejected: z.array(uploadRejection),
  duplicates: z.array(z.object({ file: z.string(), imageId: z.number().int() })),
});
export type UploadResult = z.infer<typeof uploadResponse>;
