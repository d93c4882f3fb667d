import { Router } from 'express';
import { reconstructionParams, reconstructionQuery } from '../../contracts';
import { clientGoneSignal } from '../middleware/client-gone';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const reconstructionInput = { params: reconstructionParams, query: reconstructionQuery };

/**
 * Mounted at /api/teams/:teamId/codebooks. GET /:codebookId/reconstruction/:imageId?view=original|reconstruction|error
 * answers a PNG with the container size in X-Encoded-Bytes; view=info answers the figures as JSON. Computed once per
 * codebook and image and kept; 429 while too many are being computed; stopped when the client leaves.
 */
export function reconstructionsRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.get('/:codebookId/reconstruction/:imageId', d.authenticate, d.requireTeamRole(), validate(reconstructionInput), async (req, res) => {
    const { params, query } = validated(req, reconstructionInput);
    const out = await d.reconstructions.get(params.teamId, params.codebookId, params.imageId, query.view, clientGoneSignal(res));
    if (out.kind === 'info') return void res.json(out.info);
    // Computed from a codebook and an image that never change under their ids, but only members may see them.
    res.set({ 'Content-Type': 'image/png', 'Cache-Control': 'private, max-age=3600', 'X-Encoded-Bytes': String(out.encodedBytes) }).send(out.png);
  });

  return r;
}
