import type { Request, RequestHandler } from 'express';
import { ipKeyGenerator, rateLimit } from 'express-rate-limit';
import { rateLimited } from '../../errors';

/**
 * Limits attempts per client address and e-mail, so a guesser is slowed without locking the real user
 * out from elsewhere. Counts every attempt, successful or not.
 */
export function attemptLimiter(options: { limit: number; windowMs: number; message: string }): RequestHandler {
  return rateLimit({
    windowMs: options.windowMs,
    limit: options.limit,
    standardHeaders: 'draft-7',
    legacyHeaders: false,
    keyGenerator: (req: Request) => {
      const email = typeof req.body?.email === 'string' ? req.body.email.trim().toLowerCase() : '';
      return `${ipKeyGenerator(req.ip ?? 'unknown')}|${email}`;
    },
    handler: (_req, _res, next) => {
      next(rateLimited(options.message));
    },
  });
}
