import { Router } from 'express';
import { codebookParams, exportCodebookQuery, importCodebookQuery, teamParams } from '../../contracts';
import { jsonBody } from '../middleware/body';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const listInput = { params: teamParams };
const oneInput = { params: codebookParams };
const importInput = { params: teamParams, query: importCodebookQuery };
const exportInput = { params: codebookParams, query: exportCodebookQuery };

function readRoutes(r: Router, d: RouteDeps) {
  r.get('/', d.authenticate, d.requireTeamRole(), validate(listInput), async (req, res) => {
    const { params } = validated(req, listInput);
    res.json({ codebooks: await d.codebooks.list(params.teamId) });
  });

  r.get('/:codebookId', d.authenticate, d.requireTeamRole(), validate(oneInput), async (req, res) => {
    const { params } = validated(req, oneInput);
    res.json({ codebook: await d.codebooks.get(params.teamId, params.codebookId) });
  });

  // Any member: it names which rows of the table (already in the detail) are which tree level or residual stage.
  r.get('/:codebookId/structure', d.authenticate, d.requireTeamRole(), validate(oneInput), async (req, res) => {
    const { params } = validated(req, oneInput);
    res.json(await d.codebooks.structure(params.teamId, params.codebookId));
  });
}

function transferRoutes(r: Router, d: RouteDeps) {
  // Any member: the detail route already gives every member the same codewords, so export is no wider a read.
  r.get('/:codebookId/export', d.authenticate, d.requireTeamRole(), validate(exportInput), async (req, res) => {
    const { params, query } = validated(req, exportInput);
    const { fileName, body } = await d.codebooks.export(params.teamId, req.user!.id, params.codebookId, query.target);
    // The name is already folded to [A-Za-z0-9._-], so quoting it is all RFC 6266 asks. NEP 1 names no media type
    // for .npy, so its bytes go as application/octet-stream.
    res
      .set({ 'Content-Disposition': `attachment; filename="${fileName}"`, 'Cache-Control': 'no-store' })
      .type(query.target === 'npy' ? 'application/octet-stream' : 'application/json')
      .send(body);
  });

  // The document is checked by the codebook format's own schema in the service, so the body is read here with
  // the import's large limit, once the caller is known to be an engineer or admin of the team.
  r.post('/import', d.authenticate, d.requireTeamRole('admin', 'engineer'), validate(importInput), jsonBody('codebookImport'), async (req, res) => {
    const { params, query } = validated(req, importInput);
    res.status(201).json({ codebook: await d.codebooks.import(params.teamId, req.user!.id, req.body, query.name) });
  });
}

/** Mounted at /api/teams/:teamId/codebooks. */
export function codebooksRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });
  readRoutes(r, d);
  transferRoutes(r, d);
  return r;
}
