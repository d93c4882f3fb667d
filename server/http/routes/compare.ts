import { Router } from 'express';
import { bdTableQuery, compareQuery, teamParams } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const compareInput = { params: teamParams, query: compareQuery };
const bdTableInput = { params: teamParams, query: bdTableQuery };

/**
 * Mounted at /api/teams/:teamId/compare: GET ?runs=a,b,…&rate=fixed|entropy|actual&method=pchip|cubic (each run's
 * curve per structure, with BD figures per series), and GET /bd-table?…&format=json|csv, the Bjøntegaard table of the
 * same comparison as a download.
 */
export function compareRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.get('/', d.authenticate, d.requireTeamRole(), validate(compareInput), async (req, res) => {
    const { params, query } = validated(req, compareInput);
    res.json(await d.comparison.compare(params.teamId, query.runs, query.rate, query.method));
  });

  r.get('/bd-table', d.authenticate, d.requireTeamRole(), validate(bdTableInput), async (req, res) => {
    const { params, query } = validated(req, bdTableInput);
    const table = await d.comparison.bdTable(params.teamId, query.runs, query.rate, query.method);
    const fileName = `bd-table-${query.method}-${query.rate}`;
    if (query.format === 'json') return void res.attachment(`${fileName}.json`).json(table);
    res.attachment(`${fileName}.csv`).type('text/csv; charset=utf-8').send(d.comparison.bdTableCsv(table));
  });

  return r;
}
