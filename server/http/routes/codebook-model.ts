import { Router } from 'express';
import { anomalyJobBody, codebookParams, denoiseJobBody, modelJobParams, modelJobViewParams } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const anomalyInput = { params: codebookParams, body: anomalyJobBody };
const denoiseInput = { params: codebookParams, body: denoiseJobBody };
const jobInput = { params: modelJobParams };
const viewInput = { params: modelJobViewParams };

/**
 * Mounted at /api/teams/:teamId/codebooks: the codebook read as a density of its training patches, for any member,
 * as jobs on the workers (202 with the queued job; follow it at /api/teams/:teamId/model-jobs/:jobId).
 * POST /:codebookId/anomaly-jobs   { imageId } an image's per-block scores, or { setId?, limit? } a set's most unusual blocks
 * POST /:codebookId/denoise-jobs   { imageId, sigma, seed?, step? } seeded noise added and removed by both estimators
 * POST /:codebookId/anomaly-jobs/find, /:codebookId/denoise-jobs/find   the same bodies: the job such a request queued
 *                                    before, or null (200); reads only, so a page can show a stored result
 */
export function codebookModelRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.post('/:codebookId/anomaly-jobs', d.authenticate, d.requireTeamRole(), validate(anomalyInput), async (req, res) => {
    const { params, body } = validated(req, anomalyInput);
    res.status(202).json(await d.codebookModel.requestAnomaly(params.teamId, req.user!.id, params.codebookId, body));
  });

  r.post('/:codebookId/denoise-jobs', d.authenticate, d.requireTeamRole(), validate(denoiseInput), async (req, res) => {
    const { params, body } = validated(req, denoiseInput);
    res.status(202).json(await d.codebookModel.requestDenoise(params.teamId, req.user!.id, params.codebookId, body));
  });

  r.post('/:codebookId/anomaly-jobs/find', d.authenticate, d.requireTeamRole(), validate(anomalyInput), async (req, res) => {
    const { params, body } = validated(req, anomalyInput);
    res.json(await d.codebookModel.findAnomaly(params.teamId, params.codebookId, body));
  });

  r.post('/:codebookId/denoise-jobs/find', d.authenticate, d.requireTeamRole(), validate(denoiseInput), async (req, res) => {
    const { params, body } = validated(req, denoiseInput);
    res.json(await d.codebookModel.findDenoise(params.teamId, params.codebookId, body));
  });

  return r;
}

/**
 * Mounted at /api/teams/:teamId/model-jobs: an anomaly or denoise job, for any member of its team.
 * GET /:jobId               state, progress and (once succeeded) the result
 * POST /:jobId/cancel       stops it, engineers and admins (409 once it has ended)
 * GET /:jobId/views/:view   a denoise job's PNG (clean, noisy, hard, mean)
 */
export function modelJobsRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.get('/:jobId', d.authenticate, d.requireTeamRole(), validate(jobInput), async (req, res) => {
    const { params } = validated(req, jobInput);
    res.json(await d.codebookModel.status(params.teamId, params.jobId));
  });

  r.post('/:jobId/cancel', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(jobInput), async (req, res) => {
    const { params } = validated(req, jobInput);
    res.json(await d.codebookModel.cancel(params.teamId, req.user!.id, params.jobId));
  });

  r.get('/:jobId/views/:view', d.authenticate, d.requireTeamRole(), validate(viewInput), async (req, res) => {
    const { params } = validated(req, viewInput);
    const png = await d.codebookModel.view(params.teamId, params.jobId, params.view);
    // A finished job's views never change.
    res.set({ 'Content-Type': 'image/png', 'Cache-Control': 'private, max-age=86400, immutable' }).send(png);
  });

  return r;
}
