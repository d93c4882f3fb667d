// Every route of the table × every kind of caller: who gets in, who is told to sign in (401), who is
// refused by role (403) and who is told the object does not exist (404, never 403, for other teams).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { call, defaultParams, fillPath, isErrorShape, multipartOf, routes, type RouteCase } from '../hostile/routes';
import { buildWorld, rowCounts, type World } from '../hostile/world';

let w: World;
beforeAll(async () => {
  w = await buildWorld();
});
afterAll(async () => {
  await w?.close();
});

type Caller = 'anonymous' | 'expired token' | 'token of another key' | 'viewer' | 'engineer' | 'admin' | 'outsider' | 'removed member' | 'outsider on own team';
const rank = { viewer: 1, engineer: 2, admin: 3 } as const;
const needed = { member: 1, engineer: 2, admin: 3 } as const;

/** What each caller must get: the route's success status, or the refusal the access rules call for. */
function expectedStatus(route: RouteCase, caller: Caller): number {
  if (route.access === 'public') return route.ok;
  if (caller === 'anonymous' || caller === 'expired token' || caller === 'token of another key') return 401;
  if (route.access === 'session') return route.ok;
  if (caller === 'outsider' || caller === 'removed member' || caller === 'outsider on own team') return 404;
  return rank[caller] >= needed[route.access] ? route.ok : 403;
}

const refusalCode: Record<number, string> = { 401: 'unauthenticated', 403: 'forbidden', 404: 'not_found' };

function callersOf(route: RouteCase): Caller[] {
  if (route.access === 'public') return ['anonymous'];
  const all: Caller[] = ['anonymous', 'expired token', 'token of another key', 'outsider', 'removed member', 'viewer', 'engineer', 'admin'];
  if (route.objectScoped && route.access !== 'session') all.push('outsider on own team');
  // Refusals first: a refused call must change nothing, and allowed ones run after them.
  return all.sort((a, b) => Number(expectedStatus(route, a) < 400) - Number(expectedStatus(route, b) < 400));
}

function tokenOf(caller: Caller): string | undefined {
  switch (caller) {
    case 'anonymous':
      return undefined;
    case 'expired token':
      return w.expiredToken;
    case 'token of another key':
      return w.foreignKeyToken;
    case 'viewer':
      return w.viewer.token;
    case 'engineer':
      return w.engineer.token;
    case 'admin':
      return w.admin.token;
    case 'removed member':
      return w.removed.token;
    case 'outsider':
    case 'outsider on own team':
      return w.outsider.token;
  }
}

async function attempt(route: RouteCase, caller: Caller) {
  const params = { ...defaultParams(w), ...(route.fresh ? await route.fresh(w) : {}) };
  if (caller === 'outsider on own team') params.teamId = w.outsiderTeamId;
  const query = route.query ? `?${route.query(w)}` : '';
  const url = fillPath(route.path, params) + query;
  const before = await rowCounts(w);
  const options: Parameters<typeof call>[3] = { token: tokenOf(caller) };
  if (route.body === 'json') options.json = route.valid!(w);
  if (route.body === 'multipart') options.form = await multipartOf(route, w);
  const res = await call(w, route, url, options);
  const after = await rowCounts(w);
  return { res, changed: JSON.stringify(before) !== JSON.stringify(after) };
}

describe('the access matrix', () => {
  it.each(routes.map((r) => [`${r.method} ${r.path}${r.query ? ` (${r.name})` : ''}`, r] as const))('answers %s as the roles require', async (_label, route) => {
    const actual: Record<string, number> = {};
    const expected: Record<string, number> = {};
    const problems: string[] = [];
    for (const caller of callersOf(route)) {
      const want = expectedStatus(route, caller);
      const { res, changed } = await attempt(route, caller);
      expected[caller] = want;
      actual[caller] = res.status;
      if (want >= 400) {
        if (!isErrorShape(res.json)) problems.push(`${caller}: not the error shape: ${res.text.slice(0, 200)}`);
        else if (refusalCode[want] && (res.json as { error: { code: string } }).error.code !== refusalCode[want]) {
          problems.push(`${caller}: code ${(res.json as { error: { code: string } }).error.code}, expected ${refusalCode[want]}`);
        }
        if (changed && route.access !== 'public') problems.push(`${caller}: a refused call changed the database`);
      }
      if (res.status !== want && res.status >= 400) problems.push(`${caller}: ${res.text.slice(0, 300)}`);
    }
    await w.t.composition.services.accounts.settle();
    expect({ statuses: actual, problems }).toEqual({ statuses: expected, problems: [] });
  });
});
