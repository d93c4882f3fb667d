import type { RequestHandler } from 'express';
import { forbidden } from '../../errors';

const safeMethods = new Set(['GET', 'HEAD', 'OPTIONS']);

/**
 * Refuses state-changing requests whose Origin header (RFC 6454 §7) names another site. SameSite=Strict
 * already keeps the cookie off cross-site requests; this is the second line.
 */
export function originCheck(publicUrl: string): RequestHandler {
  const allowed = new URL(publicUrl).origin;
  return (req, _res, next) => {
    if (safeMethods.has(req.method)) return next();
    const origin = req.get('origin');
    if (origin === undefined) return next();
    const own = `${req.protocol}://${req.get('host') ?? ''}`;
    if (origin === allowed || origin === own) return next();
    next(forbidden('Cross-site requests are not accepted'));
  };
}
