import { Router } from 'express';
import { acceptInvitationBody, invitationTokenParams } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';
import { setSessionCookie } from './session-cookie';

const previewInput = { params: invitationTokenParams };
const acceptInput = { params: invitationTokenParams, body: acceptInvitationBody };

/**
 * The invitee's side. The one-time token names the invitation; it is a credential only for making a new account.
 * An address that already has an account accepts while signed in as it (identify reads the session if any).
 */
export function invitationsRouter(d: RouteDeps): Router {
  const r = Router();

  r.get('/:token', validate(previewInput), async (req, res) => {
    res.set('Cache-Control', 'no-store').json(await d.invitations.preview(validated(req, previewInput).params.token));
  });

  r.post('/:token/accept', d.identify, validate(acceptInput), async (req, res) => {
    const { params, body } = validated(req, acceptInput);
    const caller = req.user && req.sessionId ? { user: req.user, sessionId: req.sessionId } : null;
    const result = await d.invitations.accept(params.token, body, caller);
    if (result.token) setSessionCookie(req, res, result.token, d.sessionTtlSeconds);
    res.json(result);
  });

  return r;
}
