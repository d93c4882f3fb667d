import type { RequestHandler } from 'express';
import { forbidden } from '../../errors';

const safeMethods = new Set(['GET', 'HEAD', 'OPTIONS']);

/**
 * Refuses state-changing requests a browser marks as cross-site (W3C Fetch Metadata, Sec-Fetch-Site), for the
 * case where no Origin header came along. Clients that send no such header (scripts, the CLI) are unaffected.
 */
export const refuseCrossSiteMutations: RequestHandler = (req, _res, next) => {
  if (safeMethods.has(req.method)) return next();
  if (req.get('sec-fetch-site') === 'cross-site') return next(forbidden('Cross-site requests are not accepted'));
  next();
};
