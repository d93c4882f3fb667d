import type { KeyObject } from 'node:crypto';
import type { Request, RequestHandler } from 'express';
import { Passport } from 'passport';
import { ExtractJwt, Strategy as JwtStrategy } from 'passport-jwt';
import type { User } from '../../contracts';
import { unauthenticated } from '../../errors';
import type { SessionClaims } from '../../services';

export const sessionCookieName = 'cw_session';

export interface AuthenticateDeps {
  /** `key` is built once (crypto.createSecretKey): a string would be re-derived into a key on every request. */
  verifyOptions: { key: KeyObject; algorithms: ['HS256'] | string[]; issuer: string };
  sessionUser(claims: Partial<SessionClaims>): Promise<User | null>;
}

const fromCookie = (req: Request): string | null => {
  const value = (req.cookies as Record<string, unknown> | undefined)?.[sessionCookieName];
  return typeof value === 'string' && value.length > 0 ? value : null;
};

/** One passport per app instance, so two apps in one test process never share strategies. */
export function createAuthenticator(deps: AuthenticateDeps) {
  const passport = new Passport();
  passport.use(
    'jwt',
    new JwtStrategy(
      {
        // The cookie is what browsers send; the Bearer header serves scripts and the command line.
        jwtFromRequest: ExtractJwt.fromExtractors([fromCookie, ExtractJwt.fromAuthHeaderAsBearerToken()]),
        // jsonwebtoken 9 verifies with a KeyObject as given; the passport-jwt typings only predate that.
        secretOrKeyProvider: (_req, _raw, done) => done(null, deps.verifyOptions.key as unknown as Buffer),
        algorithms: deps.verifyOptions.algorithms as ['HS256'],
        issuer: deps.verifyOptions.issuer,
      },
      (payload: Partial<SessionClaims>, done: (err: unknown, user?: User | false) => void) => {
        deps
          .sessionUser(payload)
          .then((user) => done(null, user ?? false))
          .catch((err: unknown) => done(err));
      },
    ),
  );

  /** 401 JSON when the request carries no valid session for an existing user. */
  const authenticate: RequestHandler = (req, res, next) => {
    passport.authenticate('jwt', { session: false }, (err: unknown, user: User | false) => {
      if (err) return next(err);
      if (!user) return next(unauthenticated());
      req.user = user;
      next();
    })(req, res, next);
  };

  return { passport, authenticate };
}
