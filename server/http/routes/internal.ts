import type { Request } from 'express';
import { Router } from 'express';
import { originalParams, registerWorkerBody } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const registerInput = { body: registerWorkerBody };
const originalInput = { params: originalParams };

/** The Bearer credential of a request; workers never use cookies. */
function bearer(req: Request): string | null {
  const header = req.get('authorization') ?? '';
  const match = /^Bearer ([A-Za-z0-9._~+/=-]{16,512})$/.exec(header);
  return match ? match[1] : null;
}

/**
 * Mounted at /internal/v1: the endpoints compute workers use, with credentials of their own (the worker token to
 * join, then a worker session). A user's session is not one of them, and a worker session opens nothing under /api.
 */
export function internalRouter(d: RouteDeps): Router {
  const r = Router();
  r.post('/workers', validate(registerInput), async (req, res) => {
    const { body } = validated(req, registerInput);
    res.status(201).set('Cache-Control', 'no-store').json(await d.workers.register(bearer(req), body));
  });
  r.get('/originals/:sha256', async (req, res, next) => {
    // Who asks comes first: an unknown caller learns nothing about which digests exist.
    const workerId = await d.workers.workerOf(bearer(req));
    validate(originalInput)(req, res, (err?: unknown) => {
      if (err) return next(err);
      const { params } = validated(req, originalInput);
      d.workers
        .original(workerId, params.sha256)
        .then((file) => res.set('Cache-Control', 'no-store').type('application/octet-stream').sendFile(file, (sendErr) => sendErr && next(sendErr)))
        .catch(next);
    });
  });
  return r;
}

/** Mounted at /api/teams/:teamId/workers; admins see the studio's compute workers and its queues. */
export function teamWorkersRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });
  r.get('/', d.authenticate, d.requireTeamRole('admin'), async (req, res) => {
    res.set('Cache-Control', 'no-store').json(await d.workers.list(req.membership!.teamId));
  });
  return r;
}
