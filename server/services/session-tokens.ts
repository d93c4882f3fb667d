import { createSecretKey, type KeyObject } from 'node:crypto';
import jwt from 'jsonwebtoken';

/** Claims of the session JWT (RFC 7519): sub is the user id, tv the user's token version. */
export interface SessionClaims {
  sub: string;
  tv: number;
}

export const jwtAlgorithm = 'HS256' as const;
export const jwtIssuer = 'cellwright';

export function createSessionTokens(options: { secret: string; ttlSeconds: number }) {
  // jsonwebtoken turns a string secret into a KeyObject on every call, first trying (and failing) to parse it as a
  // PEM public key; building the key once takes that off every authenticated request. Same bytes as the string.
  const key: KeyObject = createSecretKey(Buffer.from(options.secret, 'utf8'));
  return {
    ttlSeconds: options.ttlSeconds,
    issue(user: { id: number; tokenVersion: number }): string {
      const claims: SessionClaims = { sub: String(user.id), tv: user.tokenVersion };
      return jwt.sign(claims, key, {
        algorithm: jwtAlgorithm,
        expiresIn: options.ttlSeconds,
        issuer: jwtIssuer,
      });
    },
    /** Options for the verifier; the algorithm is pinned so an unsigned ("none") token never passes. */
    verifyOptions: { key, algorithms: [jwtAlgorithm], issuer: jwtIssuer },
  };
}

export type SessionTokens = ReturnType<typeof createSessionTokens>;
