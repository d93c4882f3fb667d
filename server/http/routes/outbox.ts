import { Router } from 'express';
import type { RouteDeps } from './deps';

/** Mounted at /api/teams/:teamId/outbox; admins only. */
export function outboxRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });
  r.get('/', d.authenticate, d.requireTeamRole('admin'), async (req, res) => {
    res.set('Cache-Control', 'no-store').json({ messages: await d.outbox.listForTeam(req.membership!.teamId) });
  });
  return r;
}
