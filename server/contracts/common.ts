import { z } from 'zod';

/** Numeric ids in URL params arrive as strings; bound them so nothing odd reaches SQL. */
export const idParam = z.coerce.number().int().positive().max(2 ** 31 - 1);
export const teamParams = z.object({ teamId: idParam });

export const roles = ['admin', 'engineer', 'viewer'] as const;
export const role = z.enum(roles);
export type Role = z.infer<typeof role>;

export const email = z.string().trim().toLowerCase().max(254).email();
/** Long enough to matter, short enough that bcrypt (72-byte input) sees all of it. */
export const password = z.string().min(10, 'Password must be at least 10 characters').max(72);
export const personName = z.string().trim().min(1).max(120);
export const teamName = z.string().trim().min(1).max(120);
