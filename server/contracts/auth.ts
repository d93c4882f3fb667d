import { z } from 'zod';
import { email, password, personName, role, teamName } from './common';

/**
 * POST /api/auth/signup {email} → 202 {status: 'accepted'} whatever the address: a new address gets a one-time
 * link to finish signing up, an existing one a note on how to sign in or reset, so the answer never says which.
 */
export const signupRequestBody = z.object({ email }).strict();
export type SignupRequestBody = z.infer<typeof signupRequestBody>;

/** The one-time token of a mailed link (32 random bytes, base64url). */
export const oneTimeToken = z.string().min(20).max(200).regex(/^[A-Za-z0-9_-]+$/, 'Not a valid link token');

/** POST /api/auth/signup/complete {token, name, password, teamName} → 201 signupResponse, and the session cookie */
export const signupCompleteBody = z.object({ token: oneTimeToken, name: personName, password, teamName }).strict();
export type SignupCompleteBody = z.infer<typeof signupCompleteBody>;
/** GET /api/auth/signup/:token → which address the link finishes signing up (404/410 when it cannot be used) */
export const signupLinkParams = z.object({ token: oneTimeToken });
export const signupLinkPreview = z.object({ email: z.string(), expiresAt: z.string() });
export type SignupLinkPreview = z.infer<typeof signupLinkPreview>;

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

/** POST /api/auth/signup/complete → 201 */
export const signupResponse = z.object({ user, team: teamWithRole, token: z.string() });
/** POST /api/auth/login → 200 (also sets the httpOnly session cookie) */
export const loginResponse = z.object({ token: z.string(), user });
export type LoginResponse = z.infer<typeof loginResponse>;
/** GET /api/me */
export const meResponse = z.object({ user, teams: z.array(teamWithRole) });
export type MeResponse = z.infer<typeof meResponse>;

/** POST /api/auth/password-reset {email} → 202 always (never tells whether the address exists) */
export const passwordResetRequestBody = z.object({ email }).strict();
/** POST /api/auth/password-reset/confirm {token, password} → 204; ends every session of the account */
export const passwordResetConfirmBody = z.object({ token: z.string().min(20).max(200), password }).strict();

/**
 * POST /api/me/password {currentPassword, newPassword} → 204: the signed-in user changes the password; every
 * other session of the account ends, the one making the change stays.
 */
export const changePasswordBody = z
  .object({ currentPassword: z.string().min(1, 'Enter your current password').max(200), newPassword: password })
  .strict()
  .refine((v) => v.currentPassword !== v.newPassword, { path: ['newPassword'], message: 'The new password must differ from the current one' });
export type ChangePasswordBody = z.infer<typeof changePasswordBody>;

/** GET /api/invitations/:token → what the accept page shows before the invitee commits */
export const invitationPreview = z.object({
  email: z.string(),
  teamName: z.string(),
  role,
  existingAccount: z.boolean(),
  expiresAt: z.string(),
});
export type InvitationPreview = z.infer<typeof invitationPreview>;
/**
 * POST /api/invitations/:token/accept. For an address that already has an account the caller must be signed in
 * as that account (401 otherwise, 403 when signed in as someone else) and the body is empty; the answer carries
 * no token. For a new address, name + password create the account and the answer carries its session token.
 */
export const acceptInvitationBody = z
  .object({ name: personName.optional(), password: password.optional() })
  .strict();
export type AcceptInvitationBody = z.infer<typeof acceptInvitationBody>;
export const acceptInvitationResponse = z.object({ user, team: teamWithRole, token: z.string().optional() });
export type AcceptInvitationResponse = z.infer<typeof acceptInvitationResponse>;

export const healthResponse = z.object({
  status: z.enum(['ok', 'degraded']),
  database: z.enum(['up', 'down']),
  version: z.string(),
});
export type HealthResponse = z.infer<typeof healthResponse>;

/** The one-time token in /api/invitations/:token paths (32 random bytes, base64url). */
export const invitationTokenParams = z.object({ token: oneTimeToken });
/** POST /api/auth/signup and POST /api/auth/password-reset → 202 */
export const acceptedResponse = z.object({ status: z.literal('accepted') });
export const passwordResetRequestResponse = acceptedResponse;
