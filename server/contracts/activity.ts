import { z } from 'zod';
import { idParam } from './common';

/** Actions recorded in the audit log (the team's activity log); one verb per thing that changes who can do what. */
export const auditActions = [
  'user.signed_up',
  'team.created',
  'member.role_changed',
  'member.removed',
  'invitation.created',
  'invitation.revoked',
  'invitation.accepted',
  'password_reset.requested',
  'password_reset.completed',
  'password.changed',
  'image_set.created',
  'image_set.deleted',
  'image_set.split',
  'images.uploaded',
  'image.deleted',
  'evaluation.requested',
  'evaluation.cancelled',
  'anomaly.requested',
  'anomaly.cancelled',
  'denoise.requested',
  'denoise.cancelled',
  'run.created',
  'run.cancelled',
  'run.renamed',
  'run.deleted',
  'codebook.exported',
  'codebook.imported',
  'codebook.reordered',
  'release.proposed',
  'release.returned',
  'release.approved',
] as const;
export const auditAction = z.enum(auditActions);
export type AuditActionName = z.infer<typeof auditAction>;

/** The kinds of object an entry names (its target type). */
export const auditTargetTypes = ['user', 'team', 'invitation', 'image_set', 'image', 'run', 'codebook', 'release'] as const;

/** Entries a page holds by default and at most. */
export const ACTIVITY_PAGE_DEFAULT = 50;
export const ACTIVITY_PAGE_MAX = 200;

/**
 * GET /api/teams/:teamId/activity: the team's audit log, newest first, `limit` at a time; pass the answer's
 * `nextBefore` as `before` for the next (older) page. Filters combine: person, action, object type and object id.
 */
export const activityQuery = z
  .object({
    actor: idParam.optional(),
    action: auditAction.optional(),
    targetType: z.enum(auditTargetTypes).optional(),
    targetId: z.string().trim().regex(/^[1-9][0-9]{0,18}$/, 'Expected a positive whole number').optional(),
    before: idParam.optional(),
    limit: z.coerce.number().int().min(1).max(ACTIVITY_PAGE_MAX).default(ACTIVITY_PAGE_DEFAULT),
  })
  .strict();
export type ActivityQuery = z.infer<typeof activityQuery>;

export const activityEntry = z.object({
  id: z.number().int(),
  action: z.string(),
  /** Who did it; null when the account no longer exists or nobody signed in did it. */
  actor: z.object({ id: z.number().int(), name: z.string() }).nullable(),
  targetType: z.string().nullable(),
  targetId: z.string().nullable(),
  details: z.record(z.string(), z.unknown()).nullable(),
  createdAt: z.string(),
});
export type ActivityEntry = z.infer<typeof activityEntry>;

export const activityResponse = z.object({
  entries: z.array(activityEntry),
  /** The `before` of the next, older page; null when this page is the last. */
  nextBefore: z.number().int().nullable(),
});
export type ActivityPage = z.infer<typeof activityResponse>;
