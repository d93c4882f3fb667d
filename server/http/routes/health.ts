import { Router } from 'express';
import type { RouteDeps } from './deps';

export function healthRouter(d: RouteDeps): Router {
  const r = Router();
  r.get('/', async (_req, res) => {
    const health = await d.health.check();
    res.status(health.status === 'ok' ? 200 : 503).set('Cache-Control', 'no-store').json(health);
  });
  return r;
}
