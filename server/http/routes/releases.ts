import { Router } from 'express';
import {
  activityQuery,
  approveReleaseBody,
  proposalParams,
  proposeReleaseBody,
  releaseParams,
  returnReleaseBody,
  teamParams,
} from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const listInput = { params: teamParams };
const oneInput = { params: releaseParams };
const proposeInput = { params: proposalParams, body: proposeReleaseBody };
const approveInput = { params: releaseParams, body: approveReleaseBody };
const returnInput = { params: releaseParams, body: returnReleaseBody };
const activityInput = { params: teamParams, query: activityQuery };

/** Mounted at /api/teams/:teamId/releases: the team's releases and reviews, and the review steps. */
export function releasesRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.get('/', d.authenticate, d.requireTeamRole(), validate(listInput), async (req, res) => {
    const { params } = validated(req, listInput);
    res.json({ releases: await d.releases.list(params.teamId) });
  });

  r.get('/:releaseId', d.authenticate, d.requireTeamRole(), validate(oneInput), async (req, res) => {
    const { params } = validated(req, oneInput);
    res.json({ release: await d.releases.get(params.teamId, params.releaseId) });
  });

  r.get('/:releaseId/report', d.authenticate, d.requireTeamRole(), validate(oneInput), async (req, res) => {
    const { params } = validated(req, oneInput);
    res.json(await d.releaseReport.report(params.teamId, params.releaseId));
  });

  // The proposer is refused by the service (403): the role check cannot know who proposed.
  r.post('/:releaseId/approve', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(approveInput), async (req, res) => {
    const { params, body } = validated(req, approveInput);
    res.json({ release: await d.releases.approve(params.teamId, req.user!.id, params.releaseId, body) });
  });

  r.post('/:releaseId/return', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(returnInput), async (req, res) => {
    const { params, body } = validated(req, returnInput);
    res.json({ release: await d.releases.sendBack(params.teamId, req.user!.id, params.releaseId, body) });
  });

  return r;
}

/** Mounted at /api/teams/:teamId/codebooks: a codebook's review (null before it is proposed) and proposing it. */
export function codebookProposalRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.get('/:codebookId/proposal', d.authenticate, d.requireTeamRole(), validate({ params: proposalParams }), async (req, res) => {
    const { params } = validated(req, { params: proposalParams });
    res.json({ release: await d.releases.forCodebook(params.teamId, params.codebookId) });
  });

  r.post('/:codebookId/proposal', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(proposeInput), async (req, res) => {
    const { params, body } = validated(req, proposeInput);
    res.status(201).json({ release: await d.releases.propose(params.teamId, req.user!.id, params.codebookId, body) });
  });

  return r;
}

/** Mounted at /api/teams/:teamId/activity: the team's activity log (its audit trail), for every member. */
export function activityRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });
  r.get('/', d.authenticate, d.requireTeamRole(), validate(activityInput), async (req, res) => {
    const { params, query } = validated(req, activityInput);
    res.json(await d.activity.page(params.teamId, query));
  });
  return r;
}
