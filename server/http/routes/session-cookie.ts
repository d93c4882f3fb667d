import type { CookieOptions, Request, Response } from 'express';
import { sessionCookieName } from '../middleware/authenticate';

// RFC 6265 §4.1.2: HttpOnly keeps it from scripts, SameSite=Strict off cross-site requests, Secure on TLS.
function cookieOptions(req: Request): CookieOptions {
  return { httpOnly: true, sameSite: 'strict', path: '/', secure: req.secure };
}

export function setSessionCookie(req: Request, res: Response, token: string, ttlSeconds: number): void {
  res.cookie(sessionCookieName, token, { ...cookieOptions(req), maxAge: ttlSeconds * 1000 });
}

export function clearSessionCookie(req: Request, res: Response): void {
  res.clearCookie(sessionCookieName, cookieOptions(req));
}
