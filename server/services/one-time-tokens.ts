import { createHash, randomBytes } from 'node:crypto';

/** 32 random bytes (256 bits) leave nothing to guess; base64url survives any URL path unescaped (RFC 4648 §5). */
export function newOneTimeToken(): { token: string; hash: string } {
  const token = randomBytes(32).toString('base64url');
  return { token, hash: hashToken(token) };
}

/** Only the SHA-256 of a token is stored, so a database leak yields no usable links. */
export function hashToken(token: string): string {
  return createHash('sha256').update(token, 'utf8').digest('hex');
}
