import { Router } from 'express';
import { acceptInvitationBody, invitationTokenParams } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';
import { setSessionCookie } from './session-cookie';

const previewInput = { params: invitationTokenParams };
const acceptInput = { params: invitationTokenParams, body: acceptInvitationBody };

/** The invitee's side: no session needed, the one-time token is the credential. */
export function invitationsRouter(d: RouteDeps): Router {
  const r = Router();

  r.get('/:token', validate(previewInput), async (req, res) => {
    res.set('Cache-Control', 'no-store').json(await d.invitations.preview(validated(req, previewInput).params.token));
  });

  r.post('/:token/accept', validate(acceptInput), async (req, res) => {
    const { params, body } = validated(req, acceptInput);
    const result = await d.invitations.accept(params.token, body);
    setSessionCookie(req, res, result.token, d.sessionTtlSeconds);
    res.json({ token: result.token, user: result.user });
  });

  return r;
}
