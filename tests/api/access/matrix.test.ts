// Every route of the table × every kind of caller: who gets in, who is told to sign in (401), who is
// refused by role (403) and who is told the object does not exist (404, never 403, for other teams). Every
// refusal is also shown to have changed nothing: every row of every table (contents, not counts) and the
// content store's files are the same before and after it.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Session } from '../../helpers/api';
import { snapshotDiff, type Snapshotter } from '../../helpers/snapshot';
import { call, defaultParams, fillPath, isErrorShape, multipartOf, routes, type RouteCase } from '../hostile/routes';
import { buildWorld, throwawaySession, worldSnapshotter, type World } from '../hostile/world';

let w: World;
let snapshots: Snapshotter;
beforeAll(async () => {
  w = await buildWorld();
  snapshots = await worldSnapshotter(w);
});
afterAll(async () => {
  await w?.close();
});

type Caller =
  | 'anonymous'
  | 'expired token'
  | 'token of another key'
  | 'viewer'
  | 'engineer'
  | 'admin'
  | 'outsider'
  | 'member of another team'
  | 'removed member'
  | 'outsider on own team';
const rank = { viewer: 1, engineer: 2, admin: 3 } as const;
const needed = { member: 1, engineer: 2, admin: 3 } as const;
const unauthenticated: Caller[] = ['anonymous', 'expired token', 'token of another key'];
const strangers: Caller[] = ['outsider', 'member of another team', 'removed member', 'outsider on own team'];

/** What each caller must get: the route's success status, or the refusal the access rules call for. */
function expectedStatus(route: RouteCase, caller: Caller): number {
  if (route.access === 'public') return route.ok;
  if (unauthenticated.includes(caller)) return 401;
  if (route.access === 'session') return route.ok;
  if (strangers.includes(caller)) return 404;
  return rank[caller as keyof typeof rank] >= needed[route.access] ? route.ok : 403;
}

const refusalCode: Record<number, string> = { 401: 'unauthenticated', 403: 'forbidden', 404: 'not_found' };

function callersOf(route: RouteCase): Caller[] {
  // A public route ignores who is asking, but a signed-in member of another team must not make it do more.
  if (route.access === 'public') return ['anonymous', 'member of another team'];
  const all: Caller[] = ['anonymous', 'expired token', 'token of another key', 'outsider', 'member of another team', 'removed member', 'viewer', 'engineer', 'admin'];
  if (route.objectScoped && route.access !== 'session') all.push('outsider on own team');
  // Refusals first: a refused call must change nothing, and allowed ones run after them.
  return all.sort((a, b) => Number(expectedStatus(route, a) < 400) - Number(expectedStatus(route, b) < 400));
}

function sessionOf(caller: Caller): Session | undefined {
  const sessions: Partial<Record<Caller, Session>> = {
    viewer: w.viewer,
    engineer: w.engineer,
    admin: w.admin,
    'removed member': w.removed,
    outsider: w.outsider,
    'outsider on own team': w.outsider,
    'member of another team': w.foreignMember,
  };
  return sessions[caller];
}

async function tokenOf(route: RouteCase, caller: Caller): Promise<string | undefined> {
  if (caller === 'anonymous') return undefined;
  if (caller === 'expired token') return w.expiredToken;
  if (caller === 'token of another key') return w.foreignKeyToken;
  if (!route.revokesSessions) return sessionOf(caller)!.token;
  // A call that ends sessions gets an account of its own in the caller's place.
  const shape = caller === 'outsider on own team' ? 'outsider' : caller === 'member of another team' ? 'foreign member' : caller;
  return (await throwawaySession(w, shape)).token;
}

async function attempt(route: RouteCase, caller: Caller) {
  const params = { ...defaultParams(w), ...(route.fresh ? await route.fresh(w) : {}) };
  if (caller === 'outsider on own team') params.teamId = w.outsiderTeamId;
  const query = route.query ? `?${route.query(w)}` : '';
  const url = fillPath(route.path, params) + query;
  const options: Parameters<typeof call>[3] = { token: await tokenOf(route, caller) };
  if (route.body === 'json') options.json = await route.valid!(w);
  if (route.body === 'multipart') options.form = await multipartOf(route, w);
  // Mail from earlier calls lands before the "before" picture, so it is not taken for this call's doing.
  await w.t.composition.services.accounts.settle();
  const before = await snapshots.take();
  const res = await call(w, route, url, options);
  await w.t.composition.services.accounts.settle();
  const diff = snapshotDiff(before, await snapshots.take());
  return { res, diff };
}

describe('the access matrix', () => {
  it.each(routes.map((r) => [`${r.method} ${r.path}${r.query ? ` (${r.name})` : ''}`, r] as const))('answers %s as the roles require', async (_label, route) => {
    const actual: Record<string, number> = {};
    const expected: Record<string, number> = {};
    const problems: string[] = [];
    for (const caller of callersOf(route)) {
      const want = expectedStatus(route, caller);
      const { res, diff } = await attempt(route, caller);
      expected[caller] = want;
      actual[caller] = res.status;
      if (want >= 400) {
        if (!isErrorShape(res.json)) problems.push(`${caller}: not the error shape: ${res.text.slice(0, 200)}`);
        else if (refusalCode[want] && (res.json as { error: { code: string } }).error.code !== refusalCode[want]) {
          problems.push(`${caller}: code ${(res.json as { error: { code: string } }).error.code}, expected ${refusalCode[want]}`);
        }
      }
      if (res.status >= 400 && diff.length > 0) problems.push(`${caller}: refused with ${res.status} but changed ${diff.join('; ')}`);
      if (res.status !== want && res.status >= 400) problems.push(`${caller}: ${res.text.slice(0, 300)}`);
    }
    expect({ statuses: actual, problems }).toEqual({ statuses: expected, problems: [] });
  });
});
