import { Router } from 'express';
import { indexMapQuery, reconstructionParams, reconstructionQuery, structureStepsQuery } from '../../contracts';
import { clientGoneSignal } from '../middleware/client-gone';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const reconstructionInput = { params: reconstructionParams, query: reconstructionQuery };
const indexMapInput = { params: reconstructionParams, query: indexMapQuery };
const stepsInput = { params: reconstructionParams, query: structureStepsQuery };

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

  // GET /:codebookId/index-map/:imageId?plane=indices|means: the image's coding as a NumPy .npy download.
  r.get('/:codebookId/index-map/:imageId', d.authenticate, d.requireTeamRole(), validate(indexMapInput), async (req, res) => {
    const { params, query } = validated(req, indexMapInput);
    const { fileName, npy } = await d.reconstructions.indexMap(params.teamId, params.codebookId, params.imageId, query.plane, clientGoneSignal(res));
    // NEP 1 names no media type for .npy; the file name is folded to [A-Za-z0-9._-], so quoting it is all RFC 6266 asks.
    res.set({ 'Content-Disposition': `attachment; filename="${fileName}"`, 'Cache-Control': 'private, max-age=3600' }).type('application/octet-stream').send(npy);
  });

  // GET /:codebookId/reconstruction/:imageId/steps: a tree's levels or a residual codebook's stages, measured;
  // with ?step=N that step's reconstruction as a PNG (as view= picks JSON or PNG on the reconstruction itself).
  r.get('/:codebookId/reconstruction/:imageId/steps', d.authenticate, d.requireTeamRole(), validate(stepsInput), async (req, res) => {
    const { params, query } = validated(req, stepsInput);
    if (query.step === undefined) return void res.json(await d.reconstructions.steps(params.teamId, params.codebookId, params.imageId, clientGoneSignal(res)));
    const png = await d.reconstructions.stepPng(params.teamId, params.codebookId, params.imageId, query.step, clientGoneSignal(res));
    res.set({ 'Content-Type': 'image/png', 'Cache-Control': 'private, max-age=3600' }).send(png);
  });

  return r;
}
