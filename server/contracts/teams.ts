import { z } from 'zod';
import { email, pathId, role } from './common';

export const member = z.object({
  userId: z.number().int(),
  email: z.string(),
  name: z.string(),
  role,
  joinedAt: z.string(),
});
export type Member = z.infer<typeof member>;
/** GET /api/teams/:teamId/members */
export const membersResponse = z.object({ members: z.array(member) });

export const memberParams = z.object({ teamId: pathId, userId: pathId });
/** PATCH /api/teams/:teamId/members/:userId (admin) */
export const updateMemberBody = z.object({ role }).strict();
/** DELETE /api/teams/:teamId/members/:userId (admin) → 204; the last admin cannot be removed or demoted (409) */

export const invitation = z.object({
  id: z.number().int(),
  email: z.string(),
  role,
  invitedBy: z.string(),
  createdAt: z.string(),
  expiresAt: z.string(),
  acceptedAt: z.string().nullable(),
});
export type Invitation = z.infer<typeof invitation>;
/** GET /api/teams/:teamId/invitations (admin) */
export const invitationsResponse = z.object({ invitations: z.array(invitation) });
/** POST /api/teams/:teamId/invitations (admin) → 201 {invitation}; sends the e-mail */
export const createInvitationBody = z.object({ email, role }).strict();
export const invitationParams = z.object({ teamId: pathId, invitationId: pathId });
/** DELETE /api/teams/:teamId/invitations/:invitationId (admin) → 204 (revokes) */

/** Mail a team's own actions caused (its invitations, its job notices), with how its delivery went. */
export const outboxMessage = z.object({
  id: z.number().int(),
  kind: z.string(),
  to: z.string(),
  subject: z.string(),
  text: z.string().nullable(),
  status: z.enum(['queued', 'sent', 'failed']),
  attempts: z.number().int(),
  lastError: z.string().nullable(),
  createdAt: z.string(),
  sentAt: z.string().nullable(),
});
export type OutboxMessage = z.infer<typeof outboxMessage>;
/**
 * GET /api/teams/:teamId/outbox (admin): the team's own mail, newest first. Account mail (sign-up links,
 * password resets) belongs to no team and is never listed; the operator reads captured mail with `npm run mail`.
 */
export const outboxResponse = z.object({ messages: z.array(outboxMessage) });

/** PATCH /api/teams/:teamId/members/:userId → 200 */
export const memberResponse = z.object({ member });
/** POST /api/teams/:teamId/invitations → 201 */
export const invitationResponse = z.object({ invitation });
