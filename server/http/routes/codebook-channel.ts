import { Router } from 'express';
import { channelQuery, codebookParams, firmwareQuery, reorderBody, roundingQuery } from '../../contracts';
import { clientGoneSignal } from '../middleware/client-gone';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const curveInput = { params: codebookParams, query: channelQuery };
const reorderInput = { params: codebookParams, body: reorderBody };
const firmwareInput = { params: codebookParams, query: firmwareQuery };
const roundingInput = { params: codebookParams, query: roundingQuery };

/**
 * Mounted at /api/teams/:teamId/codebooks: channel errors and the firmware bundle.
 * GET  /:codebookId/channel?ber&seeds&resync&setId   PSNR against bit-error rate, measured and expected (any member)
 * POST /:codebookId/reorder {ber, name?}             index assignment saved as a new codebook (engineers and admins)
 * GET  /:codebookId/firmware?residual                the C bundle as a zip attachment (any member, as the export)
 * GET  /:codebookId/firmware/rounding?residual&setId the fixed-point table's PSNR cost on held-out images (any member)
 * Curves and reordering are computed per request on a pool thread (429 when too many are); stopped when the client leaves.
 */
export function codebookChannelRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.get('/:codebookId/channel', d.authenticate, d.requireTeamRole(), validate(curveInput), async (req, res) => {
    const { params, query } = validated(req, curveInput);
    res.json(await d.codebookChannel.curve(params.teamId, params.codebookId, query, clientGoneSignal(res)));
  });

  r.post('/:codebookId/reorder', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(reorderInput), async (req, res) => {
    const { params, body } = validated(req, reorderInput);
    res.status(201).json(await d.codebookChannel.reorder(params.teamId, req.user!.id, params.codebookId, body, clientGoneSignal(res)));
  });

  r.get('/:codebookId/firmware/rounding', d.authenticate, d.requireTeamRole(), validate(roundingInput), async (req, res) => {
    const { params, query } = validated(req, roundingInput);
    res.json(await d.codebookChannel.rounding(params.teamId, params.codebookId, query, clientGoneSignal(res)));
  });

  r.get('/:codebookId/firmware', d.authenticate, d.requireTeamRole(), validate(firmwareInput), async (req, res) => {
    const { params, query } = validated(req, firmwareInput);
    const { fileName, body } = await d.codebookChannel.firmware(params.teamId, req.user!.id, params.codebookId, query.residual);
    // The name is folded to [A-Za-z0-9._-], so quoting it is all RFC 6266 asks.
    res.set({ 'Content-Disposition': `attachment; filename="${fileName}"`, 'Cache-Control': 'no-store' }).type('application/zip').send(body);
  });

  return r;
}
