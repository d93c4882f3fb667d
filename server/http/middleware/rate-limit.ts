import type { RequestHandler } from 'express';
import { rateLimit } from 'express-rate-limit';
import { rateLimited } from '../../errors';

/**
 * Limits requests per client address (req.ip: the socket's address, or X-Forwarded-For's when TRUST_PROXY names
 * the proxy), whatever e-mail they carry, so a spray across many accounts is slowed as much as guesses at one.
 * The per-account side is the sign-in backoff (services/login-throttle.ts), which a stranger can hold for at most
 * its capped delay. express-rate-limit keys IPv6 clients by their /56, so one host cannot rotate addresses.
 */
export function addressLimiter(options: {
  limit: number;
  windowMs: number;
  message: string;
  /** Count only answers ≥ 400 (failed sign-ins), so a busy office signing in correctly is never held back. */
  failuresOnly?: boolean;
}): RequestHandler {
  return rateLimit({
    windowMs: options.windowMs,
    limit: options.limit,
    standardHeaders: 'draft-7',
    legacyHeaders: false,
    skipSuccessfulRequests: options.failuresOnly ?? false,
    // A client may send X-Forwarded-For whatever TRUST_PROXY says; it is ignored unless TRUST_PROXY names the
    // proxy (README), so the library's warning about it would only let any client write to the error log.
    validate: { xForwardedForHeader: false },
    // Sets Retry-After itself before this runs (RFC 6585 §4 with RFC 9110 §10.2.3).
    handler: (_req, _res, next) => {
      next(rateLimited(options.message));
    },
  });
}
