import type { AuditEntry, Repositories } from '../db';

/** Actions recorded in audit_log; one verb per thing that changes who can do what. */
export type AuditAction =
  | 'user.signed_up'
  | 'team.created'
  | 'member.role_changed'
  | 'member.removed'
  | 'invitation.created'
  | 'invitation.revoked'
  | 'invitation.accepted'
  | 'password_reset.requested'
  | 'password_reset.completed'
  | 'password.changed'
  | 'image_set.created'
  | 'image_set.deleted'
  | 'image_set.split'
  | 'images.uploaded'
  | 'image.deleted'
  | 'evaluation.requested'
  | 'run.created'
  | 'run.cancelled'
  | 'run.renamed'
  | 'run.deleted'
  | 'codebook.exported'
  | 'codebook.imported'
  | 'codebook.reordered';

/** Written through the caller's transaction so the trail and the change commit together. */
export function recordAudit(repos: Repositories, entry: AuditEntry & { action: AuditAction }): Promise<void> {
  return repos.audit.insert(entry);
}
