import { Router } from 'express';
import { compareQuery, teamParams } from '../../contracts';
import { validate, validated } from '../middleware/validate';
import type { RouteDeps } from './deps';

const compareInput = { params: teamParams, query: compareQuery };

/** Mounted at /api/teams/:teamId/compare: GET ?runs=a,b,…&rate=fixed|entropy|actual. */
export function compareRouter(d: RouteDeps): Router {
  const r = Router({ mergeParams: true });

  r.get('/', d.authenticate, d.requireTeamRole(), validate(compareInput), async (req, res) => {
    const { params, query } = validated(req, compareInput);
    res.json(await d.comparison.compare(params.teamId, query.runs, query.rate));
  });

  return r;
}
