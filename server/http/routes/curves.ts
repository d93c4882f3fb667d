import { Router } from 'express';
import { evaluateCodebookBody, evaluateCodebookParams, exportFormatQuery, runResultParams } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const resultInput = { params: runResultParams, query: exportFormatQuery };
const evaluateInput = { params: evaluateCodebookParams, body: evaluateCodebookBody };
const evaluationsInput = { params: evaluateCodebookParams };

/** Mounted at /api/teams/:teamId/runs: a run's rate–distortion curve and per-image metrics, as JSON or CSV. */
export function runResultsRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.get('/:runId/curve', d.authenticate, d.requireTeamRole(), validate(resultInput), async (req, res) => {
    const { params, query } = validated(req, resultInput);
    if (query.format === 'json') return void res.json(await d.evaluation.curve(params.teamId, params.runId));
    const { fileName, text } = await d.evaluation.curveCsv(params.teamId, params.runId);
    res.attachment(fileName).type('text/csv; charset=utf-8').send(text);
  });

  r.get('/:runId/metrics', d.authenticate, d.requireTeamRole(), validate(resultInput), async (req, res) => {
    const { params, query } = validated(req, resultInput);
    if (query.format === 'json') return void res.json(await d.evaluation.metrics(params.teamId, params.runId));
    const { fileName, text } = await d.evaluation.metricsCsv(params.teamId, params.runId);
    res.attachment(fileName).type('text/csv; charset=utf-8').send(text);
  });

  return r;
}

/** Mounted at /api/teams/:teamId/codebooks: evaluating one codebook (typically imported) on a held-out list. */
export function codebookEvaluationsRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.post('/:codebookId/evaluate', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(evaluateInput), async (req, res) => {
    const { params, body } = validated(req, evaluateInput);
    res.status(202).json(await d.evaluation.requestEvaluation(params.teamId, req.user!.id, params.codebookId, body));
  });

  r.get('/:codebookId/evaluations', d.authenticate, d.requireTeamRole(), validate(evaluationsInput), async (req, res) => {
    const { params } = validated(req, evaluationsInput);
    res.json(await d.evaluation.codebookEvaluations(params.teamId, params.codebookId));
  });

  return r;
}
