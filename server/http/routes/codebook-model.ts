import { Router } from 'express';
import { anomalyImageParams, anomalyListQuery, anomalyQuery, codebookParams, denoiseQuery } from '../../contracts';
import { clientGoneSignal } from '../middleware/client-gone';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const mapInput = { params: anomalyImageParams, query: anomalyQuery };
const listInput = { params: codebookParams, query: anomalyListQuery };
const denoiseInput = { params: anomalyImageParams, query: denoiseQuery };

/**
 * Mounted at /api/teams/:teamId/codebooks: the codebook read as a density of its training patches, for any member.
 * GET /:codebookId/anomaly/:imageId?rate&score   every coding block's scores and the flagged blocks of one image
 * GET /:codebookId/anomalies?rate&score&setId&limit   the most unusual blocks over a set, highest first
 * GET /:codebookId/denoise/:imageId?sigma&seed&step   seeded noise added and removed by both estimators, with PSNR
 * Computed per request on a pool thread (429 when too many are); stopped when the client leaves.
 */
export function codebookModelRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.get('/:codebookId/anomaly/:imageId', d.authenticate, d.requireTeamRole(), validate(mapInput), async (req, res) => {
    const { params, query } = validated(req, mapInput);
    res.json(await d.codebookModel.anomalyMap(params.teamId, params.codebookId, params.imageId, query, clientGoneSignal(res)));
  });

  r.get('/:codebookId/anomalies', d.authenticate, d.requireTeamRole(), validate(listInput), async (req, res) => {
    const { params, query } = validated(req, listInput);
    res.json(await d.codebookModel.anomalyList(params.teamId, params.codebookId, query, clientGoneSignal(res)));
  });

  r.get('/:codebookId/denoise/:imageId', d.authenticate, d.requireTeamRole(), validate(denoiseInput), async (req, res) => {
    const { params, query } = validated(req, denoiseInput);
    res.json(await d.codebookModel.denoise(params.teamId, params.codebookId, params.imageId, query, clientGoneSignal(res)));
  });

  return r;
}
