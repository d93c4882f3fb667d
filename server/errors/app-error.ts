import type { ErrorCode } from '../contracts/errors';

/** An error meant for the client: its code, status and message are safe to show as they are. */
export class AppError extends Error {
  constructor(
    readonly code: ErrorCode,
    readonly status: number,
    message: string,
    readonly details?: unknown,
    /** Sent as Retry-After (RFC 9110 §10.2.3) with the answer: how long the client should wait. */
    readonly retryAfterSeconds?: number,
  ) {
    super(message);
    this.name = 'AppError';
  }
}

export const badRequest = (message: string, details?: unknown) => new AppError('bad_request', 400, message, details);
export const validationFailed = (message: string, details?: unknown) =>
  new AppError('validation_failed', 400, message, details);
export const unauthenticated = (message = 'Sign in to continue') => new AppError('unauthenticated', 401, message);
export const forbidden = (message = 'Your role does not allow this') => new AppError('forbidden', 403, message);
export const notFound = (what = 'Resource') => new AppError('not_found', 404, `${what} not found`);
export const conflict = (message: string, details?: unknown) => new AppError('conflict', 409, message, details);
export const tokenExpired = (message: string) => new AppError('token_expired', 410, message);
export const tokenUsed = (message: string) => new AppError('token_used', 410, message);
export const tokenRevoked = (message: string) => new AppError('token_revoked', 410, message);
export const payloadTooLarge = (message = 'Request body is too large') =>
  new AppError('payload_too_large', 413, message);
export const unsupportedMediaType = (message: string) => new AppError('unsupported_media_type', 415, message);
export const rateLimited = (message = 'Too many attempts; try again later', retryAfterSeconds?: number) =>
  new AppError('rate_limited', 429, message, retryAfterSeconds === undefined ? undefined : { retryAfterSeconds }, retryAfterSeconds);
export const serviceUnavailable = (message = 'The database is unavailable; try again shortly') =>
  new AppError('service_unavailable', 503, message);
export const internal = (message = 'Something went wrong on our side') => new AppError('internal', 500, message);

export const isAppError = (err: unknown): err is AppError => err instanceof AppError;
