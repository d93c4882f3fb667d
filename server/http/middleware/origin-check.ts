import type { RequestHandler } from 'express';
import { forbidden } from '../../errors';

const safeMethods = new Set(['GET', 'HEAD', 'OPTIONS']);

/** The origin of a Referer URL, or null when it is not one (RFC 6454 §4 gives http(s) URLs an origin). */
function originOfReferer(referer: string): string | null {
  try {
    const url = new URL(referer);
    return url.protocol === 'http:' || url.protocol === 'https:' ? url.origin : null;
  } catch {
    return null;
  }
}

/**
 * Refuses state-changing requests from any origin but the studio's own (PUBLIC_URL) and the configured
 * ALLOWED_ORIGINS. The Origin header (RFC 6454 §7) is compared with that list only: never with the request's own
 * Host, which a DNS-rebinding page controls (it names its own host, resolved to this server). "null" (sandboxed
 * frames, file: pages) is not in the list. Without an Origin a Referer, if any, must name an allowed origin too
 * (OWASP CSRF Prevention Cheat Sheet, "Identifying the source origin"); with neither, the request is left to the
 * Fetch Metadata check that follows, since scripts and the command line send no such headers. SameSite=Strict keeps
 * the session cookie off cross-site requests already; this is the second line.
 */
export function originCheck(allowedOrigins: readonly string[]): RequestHandler {
  const allowed = new Set(allowedOrigins);
  const refusal = 'Cross-site requests are not accepted: open the studio at its own address (PUBLIC_URL) or add this origin to ALLOWED_ORIGINS';
  return (req, _res, next) => {
    if (safeMethods.has(req.method)) return next();
    const origin = req.get('origin');
    if (origin !== undefined) return allowed.has(origin) ? next() : next(forbidden(refusal));
    const referer = req.get('referer');
    if (referer === undefined) return next();
    const from = originOfReferer(referer);
    return from !== null && allowed.has(from) ? next() : next(forbidden(refusal));
  };
}
