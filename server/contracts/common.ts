import { z } from 'zod';

/** Ids in request bodies: positive whole numbers within the INT range of the tables. */
export const idParam = z.coerce.number().int().positive().max(2 ** 31 - 1);
/**
 * Ids in URL paths arrive as strings; only the canonical decimal form names an object, so `0x1`, `1e0`
 * or ` 1` are refused rather than quietly read as 1.
 */
export const pathId = z
  .string()
  .regex(/^[1-9][0-9]{0,9}$/, 'Expected a positive whole number')
  .transform(Number)
  .pipe(z.number().max(2 ** 31 - 1));
export const teamParams = z.object({ teamId: pathId });

export const roles = ['admin', 'engineer', 'viewer'] as const;
export const role = z.enum(roles);
export type Role = z.infer<typeof role>;

export const email = z.string().trim().toLowerCase().max(254).email();
/** bcrypt reads at most 72 bytes of its input and ignores the rest (the OpenBSD bcrypt paper; bcryptjs does the same). */
export const passwordMaxBytes = 72;
const utf8Length = (s: string) => new TextEncoder().encode(s).length;
/**
 * Long enough to matter, short enough that bcrypt sees all of it: the cap is in UTF-8 bytes, not characters,
 * since a letter outside ASCII takes 2–4 bytes and characters past byte 72 would silently not count.
 */
export const password = z
  .string()
  .min(10, 'Password must be at least 10 characters')
  .refine((v) => utf8Length(v) <= passwordMaxBytes, {
    message: `Password must be at most ${passwordMaxBytes} bytes in UTF-8 (letters outside A–Z count 2–4 bytes each)`,
  });
export const personName = z.string().trim().min(1).max(120);
export const teamName = z.string().trim().min(1).max(120);
