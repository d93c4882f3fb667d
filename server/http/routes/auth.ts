import { Router } from 'express';
import {
  loginBody,
  passwordResetConfirmBody,
  passwordResetRequestBody,
  signupCompleteBody,
  signupLinkParams,
  signupRequestBody,
} from '../../contracts';
import { jsonBody } from '../middleware/body';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';
import { clearSessionCookie, setSessionCookie } from './session-cookie';

const signupInput = { body: signupRequestBody };
const signupPreviewInput = { params: signupLinkParams };
const signupCompleteInput = { body: signupCompleteBody };
const loginInput = { body: loginBody };
const resetRequestInput = { body: passwordResetRequestBody };
const resetConfirmInput = { body: passwordResetConfirmBody };

/** Limiters run before validation, so a flood of malformed bodies is counted too. */
export function authRouter(d: RouteDeps): Router {
  const r = Router();
  // Anonymous routes, with the small limit; read up front because the attempt limiters key on the e-mail in it.
  r.use(jsonBody('anonymous'));

  // The same 202 whether or not the address has an account; the mail says what to do next.
  r.post('/signup', d.limiters.signup, validate(signupInput), (req, res) => {
    d.accounts.requestSignup(validated(req, signupInput).body.email);
    res.status(202).json({ status: 'accepted' });
  });

  r.get('/signup/:token', validate(signupPreviewInput), async (req, res) => {
    res.set('Cache-Control', 'no-store').json(await d.accounts.previewSignup(validated(req, signupPreviewInput).params.token));
  });

  r.post('/signup/complete', d.limiters.signupComplete, validate(signupCompleteInput), async (req, res) => {
    const result = await d.accounts.completeSignup(validated(req, signupCompleteInput).body);
    setSessionCookie(req, res, result.token, d.sessionTtlSeconds);
    res.status(201).json(result);
  });

  r.post('/login', d.limiters.login, validate(loginInput), async (req, res) => {
    const result = await d.accounts.login(validated(req, loginInput).body);
    setSessionCookie(req, res, result.token, d.sessionTtlSeconds);
    res.json({ token: result.token, user: result.user });
  });

  // Ends the session the token names (cookie or Bearer) on the server, not only in this browser.
  r.post('/logout', d.identify, async (req, res) => {
    await d.accounts.logout(req.user && req.sessionId ? { userId: req.user.id, sessionId: req.sessionId } : undefined);
    clearSessionCookie(req, res);
    res.status(204).end();
  });

  r.post('/password-reset', d.limiters.resetRequest, validate(resetRequestInput), (req, res) => {
    d.accounts.requestPasswordReset(validated(req, resetRequestInput).body.email);
    res.status(202).json({ status: 'accepted' });
  });

  r.post('/password-reset/confirm', d.limiters.resetConfirm, validate(resetConfirmInput), async (req, res) => {
    const { token, password } = validated(req, resetConfirmInput).body;
    await d.accounts.confirmPasswordReset(token, password);
    res.status(204).end();
  });

  return r;
}
