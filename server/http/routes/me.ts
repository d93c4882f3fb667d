import { Router } from 'express';
import type { RouteDeps } from './deps';

export function meRouter(d: RouteDeps): Router {
  const r = Router();
  r.get('/', d.authenticate, async (req, res) => {
    res.json(await d.accounts.me(req.user!));
  });
  return r;
}
