import { Router } from 'express';
import { createRunBody, renameRunBody, runParams, teamParams } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const listInput = { params: teamParams };
const createInput = { params: teamParams, body: createRunBody };
const oneInput = { params: runParams };
const renameInput = { params: runParams, body: renameRunBody };

function readRoutes(r: Router, d: RouteDeps) {
  r.get('/', d.authenticate, d.requireTeamRole(), validate(listInput), async (req, res) => {
    const { params } = validated(req, listInput);
    res.set('Cache-Control', 'no-store').json({ runs: await d.runs.list(params.teamId) });
  });

  r.get('/:runId', d.authenticate, d.requireTeamRole(), validate(oneInput), async (req, res) => {
    const { params } = validated(req, oneInput);
    res.set('Cache-Control', 'no-store').json({ run: await d.runs.get(params.teamId, params.runId) });
  });

  // Every member may watch; the stream ends when the reader stops being one (see eventStreams).
  r.get('/:runId/events', d.authenticate, d.requireTeamRole(), validate(oneInput), d.eventStreams.reserve, async (req, res) => {
    const { params } = validated(req, oneInput);
    d.eventStreams.serve(req, res, await d.runs.watch(params.teamId, params.runId));
  });
}

function writeRoutes(r: Router, d: RouteDeps) {
  r.post('/', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(createInput), async (req, res) => {
    const { params, body } = validated(req, createInput);
    res.status(201).json({ run: await d.runs.create(params.teamId, req.user!.id, body) });
  });

  r.post('/:runId/cancel', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(oneInput), async (req, res) => {
    const { params } = validated(req, oneInput);
    res.json({ run: await d.runs.cancel(params.teamId, req.user!.id, params.runId) });
  });

  r.patch('/:runId', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(renameInput), async (req, res) => {
    const { params, body } = validated(req, renameInput);
    res.json({ run: await d.runs.rename(params.teamId, req.user!.id, params.runId, body) });
  });

  r.delete('/:runId', d.authenticate, d.requireTeamRole('admin'), validate(oneInput), async (req, res) => {
    const { params } = validated(req, oneInput);
    await d.runs.remove(params.teamId, req.user!.id, params.runId);
    res.status(204).end();
  });
}

/** Mounted at /api/teams/:teamId/runs. */
export function runsRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });
  readRoutes(r, d);
  writeRoutes(r, d);
  return r;
}
