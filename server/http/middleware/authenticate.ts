import type { KeyObject } from 'node:crypto';
import type { Request, RequestHandler } from 'express';
import { Passport } from 'passport';
import { ExtractJwt, Strategy as JwtStrategy } from 'passport-jwt';
import { unauthenticated } from '../../errors';
import type { Caller, SessionClaims } from '../../services';
import { withMeta } from './route-meta';

export const sessionCookieName = 'cw_session';

export interface AuthenticateDeps {
  /** `key` is built once (crypto.createSecretKey): a string would be re-derived into a key on every request. */
  verifyOptions: { key: KeyObject; algorithms: ['HS256'] | string[]; issuer: string };
  /** The caller a verified token names, or null when its session is revoked or expired or its user gone. */
  sessionUser(claims: Partial<SessionClaims>): Promise<Caller | null>;
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
      (payload: Partial<SessionClaims>, done: (err: unknown, caller?: Caller | false) => void) => {
        deps
          .sessionUser(payload)
          .then((caller) => done(null, caller ?? false))
          .catch((err: unknown) => done(err));
      },
    ),
  );

  /** Sets req.user and req.sessionId from a live session; `required` answers 401 when there is none. */
  const identifyWith =
    (required: boolean): RequestHandler =>
    (req, res, next) => {
      passport.authenticate('jwt', { session: false }, (err: unknown, caller: Caller | false) => {
        if (err) return next(err);
        if (!caller) return required ? next(unauthenticated()) : next();
        req.user = caller.user;
        req.sessionId = caller.sessionId;
        next();
      })(req, res, next);
    };

  /** 401 JSON when the request carries no live session of an existing user. */
  const authenticate = withMeta(identifyWith(true), { kind: 'authenticate' });
  /** The same for routes open to everyone that act differently for a signed-in caller (sign-out, invitations). */
  const identify = withMeta(identifyWith(false), { kind: 'identify' });

  return { passport, authenticate, identify };
}
