import { Router } from 'express';
import { createEvaluationBatchBody, evaluationBatchListParams, evaluationBatchParams, exportFormatQuery, teamParams } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const listInput = { params: evaluationBatchListParams };
const createInput = { params: teamParams, body: createEvaluationBatchBody };
const oneInput = { params: evaluationBatchParams };
const matrixInput = { params: evaluationBatchParams, query: exportFormatQuery };

/** Mounted at /api/teams/:teamId/evaluation-batches: several codebooks on several image sets as one job, and its matrix. */
export function evaluationBatchesRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.get('/', d.authenticate, d.requireTeamRole(), validate(listInput), async (req, res) => {
    const { params } = validated(req, listInput);
    res.json(await d.evaluation.listBatches(params.teamId));
  });

  r.post('/', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(createInput), async (req, res) => {
    const { params, body } = validated(req, createInput);
    res.status(202).json({ batch: await d.evaluation.requestBatch(params.teamId, req.user!.id, body) });
  });

  r.get('/:jobId', d.authenticate, d.requireTeamRole(), validate(oneInput), async (req, res) => {
    const { params } = validated(req, oneInput);
    res.json({ batch: await d.evaluation.getBatch(params.teamId, params.jobId) });
  });

  r.post('/:jobId/cancel', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(oneInput), async (req, res) => {
    const { params } = validated(req, oneInput);
    res.json({ batch: await d.evaluation.cancelBatch(params.teamId, req.user!.id, params.jobId) });
  });

  r.get('/:jobId/matrix', d.authenticate, d.requireTeamRole(), validate(matrixInput), async (req, res) => {
    const { params, query } = validated(req, matrixInput);
    if (query.format === 'json') return void res.json({ batch: await d.evaluation.getBatch(params.teamId, params.jobId) });
    const { fileName, text } = await d.evaluation.matrixCsv(params.teamId, params.jobId);
    res.attachment(fileName).type('text/csv; charset=utf-8').send(text);
  });

  return r;
}
