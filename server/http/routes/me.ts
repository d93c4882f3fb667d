import { Router } from 'express';
import { changePasswordBody } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const changePasswordInput = { body: changePasswordBody };

export function meRouter(d: RouteDeps): Router {
  const r = Router();
  r.get('/', d.authenticate, async (req, res) => {
    res.json(await d.accounts.me(req.user!));
  });

  // The sign-in limiter too: a stolen session must not become a way to guess the password it lacks.
  r.post('/password', d.authenticate, d.limiters.login, validate(changePasswordInput), async (req, res) => {
    await d.accounts.changePassword({ user: req.user!, sessionId: req.sessionId! }, validated(req, changePasswordInput).body);
    res.status(204).end();
  });
  return r;
}
