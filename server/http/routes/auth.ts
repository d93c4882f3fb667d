import { Router } from 'express';
import { loginBody, passwordResetConfirmBody, passwordResetRequestBody, signupBody } from '../../contracts';
import { jsonBody } from '../middleware/body';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';
import { clearSessionCookie, setSessionCookie } from './session-cookie';

const signupInput = { body: signupBody };
const loginInput = { body: loginBody };
const resetRequestInput = { body: passwordResetRequestBody };
const resetConfirmInput = { body: passwordResetConfirmBody };

export function authRouter(d: RouteDeps): Router {
  const r = Router();
  // Anonymous routes, with the small limit; read up front because the attempt limiters key on the e-mail in it.
  r.use(jsonBody('anonymous'));

  r.post('/signup', validate(signupInput), async (req, res) => {
    const result = await d.accounts.signup(validated(req, signupInput).body);
    setSessionCookie(req, res, result.token, d.sessionTtlSeconds);
    res.status(201).json(result);
  });

  r.post('/login', d.loginLimiter, validate(loginInput), async (req, res) => {
    const result = await d.accounts.login(validated(req, loginInput).body);
    setSessionCookie(req, res, result.token, d.sessionTtlSeconds);
    res.json({ token: result.token, user: result.user });
  });

  r.post('/logout', (req, res) => {
    clearSessionCookie(req, res);
    res.status(204).end();
  });

  r.post('/password-reset', d.resetLimiter, validate(resetRequestInput), (req, res) => {
    d.accounts.requestPasswordReset(validated(req, resetRequestInput).body.email);
    res.status(202).json({ status: 'accepted' });
  });

  r.post('/password-reset/confirm', validate(resetConfirmInput), async (req, res) => {
    const { token, password } = validated(req, resetConfirmInput).body;
    await d.accounts.confirmPasswordReset(token, password);
    res.status(204).end();
  });

  return r;
}
