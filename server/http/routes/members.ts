import { Router } from 'express';
import { memberParams, updateMemberBody } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const updateInput = { params: memberParams, body: updateMemberBody };
const removeInput = { params: memberParams };

/** Mounted at /api/teams/:teamId/members. */
export function membersRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.get('/', d.authenticate, d.requireTeamRole(), async (req, res) => {
    res.json({ members: await d.teams.listMembers(req.membership!.teamId) });
  });

  r.patch('/:userId', d.authenticate, d.requireTeamRole('admin'), validate(updateInput), async (req, res) => {
    const { params, body } = validated(req, updateInput);
    res.json({ member: await d.teams.changeRole(params.teamId, req.user!.id, params.userId, body.role) });
  });

  r.delete('/:userId', d.authenticate, d.requireTeamRole('admin'), validate(removeInput), async (req, res) => {
    const { params } = validated(req, removeInput);
    await d.teams.removeMember(params.teamId, req.user!.id, params.userId);
    res.status(204).end();
  });

  return r;
}
