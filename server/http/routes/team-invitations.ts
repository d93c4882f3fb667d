import { Router } from 'express';
import { createInvitationBody, invitationParams } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const createInput = { body: createInvitationBody };
const revokeInput = { params: invitationParams };

/** Mounted at /api/teams/:teamId/invitations; admins only. */
export function teamInvitationsRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });
  r.use(d.authenticate, d.requireTeamRole('admin'));

  r.get('/', async (req, res) => {
    res.json({ invitations: await d.invitations.list(req.membership!.teamId) });
  });

  r.post('/', validate(createInput), async (req, res) => {
    const invitation = await d.invitations.create(req.membership!.teamId, req.user!, validated(req, createInput).body);
    res.status(201).json({ invitation });
  });

  r.delete('/:invitationId', validate(revokeInput), async (req, res) => {
    const { params } = validated(req, revokeInput);
    await d.invitations.revoke(params.teamId, req.user!.id, params.invitationId);
    res.status(204).end();
  });

  return r;
}
