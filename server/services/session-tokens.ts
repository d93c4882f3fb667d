import { createSecretKey, randomBytes, type KeyObject } from 'node:crypto';
import jwt from 'jsonwebtoken';

/**
 * Claims of the session JWT (RFC 7519): sub is the user id, jti the id of the server-side session row
 * (§4.1.7), which is what makes a token revocable before its exp.
 */
export interface SessionClaims {
  sub: string;
  jti: string;
}

export const jwtAlgorithm = 'HS256' as const;
export const jwtIssuer = 'cellwright';

export function createSessionTokens(options: { secret: string; ttlSeconds: number }) {
  // jsonwebtoken turns a string secret into a KeyObject on every call, first trying (and failing) to parse it as a
  // PEM public key; building the key once takes that off every authenticated request. Same bytes as the string.
  const key: KeyObject = createSecretKey(Buffer.from(options.secret, 'utf8'));
  return {
    ttlSeconds: options.ttlSeconds,
    /** 16 random bytes (128 bits, base64url): a session id nobody can guess. */
    newSessionId(): string {
      return randomBytes(16).toString('base64url');
    },
    sign(session: { userId: number; sessionId: string }): string {
      const claims: SessionClaims = { sub: String(session.userId), jti: session.sessionId };
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
