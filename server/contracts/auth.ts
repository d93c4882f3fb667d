import { z } from 'zod';
import { email, password, personName, role, teamName } from './common';

export const signupBody = z.object({ email, password, name: personName, teamName }).strict();
export type SignupBody = z.infer<typeof signupBody>;

export const loginBody = z.object({ email, password: z.string().min(1).max(200) }).strict();
export type LoginBody = z.infer<typeof loginBody>;

export const user = z.object({
  id: z.number().int(),
  email: z.string(),
  name: z.string(),
  createdAt: z.string(),
});
export type User = z.infer<typeof user>;

export const teamWithRole = z.object({ id: z.number().int(), name: z.string(), role });
export type TeamWithRole = z.infer<typeof teamWithRole>;

/** POST /api/auth/signup → 201 */
export const signupResponse = z.object({ user, team: teamWithRole, token: z.string() });
/** POST /api/auth/login → 200 (also sets the httpOnly session cookie) */
export const loginResponse = z.object({ token: z.string(), user });
export type LoginResponse = z.infer<typeof loginResponse>;
/** GET /api/me */
export const meResponse = z.object({ user, teams: z.array(teamWithRole) });
export type MeResponse = z.infer<typeof meResponse>;

/** POST /api/auth/password-reset {email} → 202 always (never tells whether the address exists) */
export const passwordResetRequestBody = z.object({ email }).strict();
/** POST /api/auth/password-reset/confirm {token, password} → 204 */
export const passwordResetConfirmBody = z.object({ token: z.string().min(20).max(200), password }).strict();

/** GET /api/invitations/:token → what the accept page shows before the invitee commits */
export const invitationPreview = z.object({
  email: z.string(),
  teamName: z.string(),
  role,
  existingAccount: z.boolean(),
  expiresAt: z.string(),
});
export type InvitationPreview = z.infer<typeof invitationPreview>;
/** POST /api/invitations/:token/accept → 200 {token, user}; name+password needed only for a new account */
export const acceptInvitationBody = z
  .object({ name: personName.optional(), password: password.optional() })
  .strict();

export const healthResponse = z.object({
  status: z.enum(['ok', 'degraded']),
  database: z.enum(['up', 'down']),
  version: z.string(),
});
export type HealthResponse = z.infer<typeof healthResponse>;

/** The one-time token in /api/invitations/:token paths (32 random bytes, base64url). */
export const invitationTokenParams = z.object({ token: z.string().min(20).max(200).regex(/^[A-Za-z0-9_-]+$/) });
/** POST /api/auth/password-reset → 202 */
export const passwordResetRequestResponse = z.object({ status: z.literal('accepted') });
