import { z } from 'zod';

/** Every error response of the API has this one shape. */
export const errorBody = z.object({
  error: z.object({
    code: z.string(),
    message: z.string(),
    details: z.unknown().optional(),
  }),
});
export type ErrorBody = z.infer<typeof errorBody>;

/** The error codes the API uses; clients branch on these, never on messages. */
export const errorCodes = [
  'bad_request',
  'validation_failed',
  'unauthenticated',
  'forbidden',
  'not_found',
  'conflict',
  'payload_too_large',
  'unsupported_media_type',
  'rate_limited',
  // 410: a one-time link (invitation, password reset) that can no longer be used, and why.
  'token_expired',
  'token_used',
  'token_revoked',
  'service_unavailable',
  'internal',
] as const;
export type ErrorCode = (typeof errorCodes)[number];
