import jwt from 'jsonwebtoken';

/** Claims of the session JWT (RFC 7519): sub is the user id, tv the user's token version. */
export interface SessionClaims {
  sub: string;
  tv: number;
}

export const jwtAlgorithm = 'HS256' as const;
export const jwtIssuer = 'cellwright';

export function createSessionTokens(options: { secret: string; ttlSeconds: number }) {
  return {
    ttlSeconds: options.ttlSeconds,
    issue(user: { id: number; tokenVersion: number }): string {
      const claims: SessionClaims = { sub: String(user.id), tv: user.tokenVersion };
      return jwt.sign(claims, options.secret, {
        algorithm: jwtAlgorithm,
        expiresIn: options.ttlSeconds,
        issuer: jwtIssuer,
      });
    },
    /** Options for the verifier; the algorithm is pinned so an unsigned ("none") token never passes. */
    verifyOptions: { secret: options.secret, algorithms: [jwtAlgorithm], issuer: jwtIssuer },
  };
}

export type SessionTokens = ReturnType<typeof createSessionTokens>;
