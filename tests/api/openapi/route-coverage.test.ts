// The API description (server/http/description) is a table beside the routers. These tests hold it to what the app
// really mounts, read from the running app's router stack: every route, its access as its guards enforce it, and
// the very zod schemas its validation uses. A route mounted anywhere, by any file, appears in the stack.
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { accessRoles } from '../../../server/http/description/openapi';
import { routeTable, type Access, type RouteDescription } from '../../../server/http/description/route-table';
import type { Role } from '../../../server/contracts';
import { createTestApp, type TestApp } from '../../helpers/api';
import { mountedRoutes, plainMiddlewareMounts, type MountedRoute } from '../../helpers/mounted-routes';
import { routes as accessMatrix } from '../hostile/routes';

let t: TestApp;
let mounted: MountedRoute[];

beforeAll(async () => {
  t = await createTestApp();
  mounted = mountedRoutes(t.app);
});

afterAll(async () => {
  await t?.close();
});

const key = (r: { method: string; path: string }) => `${r.method.toUpperCase()} ${r.path}`;
const describedRoute = (r: MountedRoute): RouteDescription => routeTable.find((d) => key(d) === key(r))!;

/** The access a mounted route's guards enforce: the roles every role check admits, else the session check. */
function enforcedAccess(r: MountedRoute): Access {
  const roleSets = r.guards.flatMap((g) => (g.kind === 'role' ? [g.roles] : []));
  if (roleSets.length > 0) {
    const admitted = roleSets.reduce<readonly Role[]>((acc, roles) => acc.filter((x) => roles.includes(x)), roleSets[0]);
    const match = (['member', 'engineer', 'admin'] as const).find((a) => [...accessRoles[a]!].sort().join() === [...admitted].sort().join());
    if (!match) throw new Error(`${key(r)} admits ${admitted.join(', ')}, which no access level names`);
    return match;
  }
  if (r.guards.some((g) => g.kind === 'authenticate')) return 'session';
  if (r.guards.some((g) => g.kind === 'identify')) return 'optional-session';
  return 'public';
}

describe('the API description', () => {
  it('lists exactly the routes mounted on the app', () => {
    expect(mounted.length).toBeGreaterThan(40);
    expect(routeTable.map(key).sort()).toEqual(mounted.map(key).sort());
    expect(new Set(routeTable.map(key)).size).toBe(routeTable.length);
  });

  it('leaves no way to answer a request outside a route: plain middleware sits only on the whole app or API', () => {
    // Helmet, logging, body-type checks, passport, the JSON 404 of unknown /api and /internal paths, and the body
    // reader of the anonymous account routes. A function mounted below a path of its own (app.use('/api/x', fn))
    // could serve an endpoint the walk cannot see, so a new place fails here until someone has looked at it.
    expect(plainMiddlewareMounts(t.app)).toEqual(['/', '/api', '/api/auth', '/internal']);
  });

  it('gives each route the access its guards enforce', () => {
    for (const r of mounted) {
      const described = describedRoute(r).access;
      const enforced = enforcedAccess(r);
      // Compute workers prove who they are to the workers service with a credential of their own, under /internal only.
      if (described === 'worker') expect([key(r), enforced, r.path.startsWith('/internal/')]).toEqual([key(r), 'public', true]);
      else expect([key(r), described]).toEqual([key(r), enforced]);
      // A session check always comes before a role check, and nothing is validated before either (DEVELOPERS.md).
      const order = r.guards.map((g) => g.kind);
      if (order.includes('role')) expect(order.indexOf('authenticate')).toBeLessThan(order.indexOf('role'));
      if (order.includes('validate')) expect(order.lastIndexOf('role')).toBeLessThan(order.indexOf('validate'));
    }
  });

  it('documents the very schemas each route validates its params, query and body with', () => {
    for (const r of mounted) {
      const described = describedRoute(r);
      const validations = r.guards.flatMap((g) => (g.kind === 'validate' ? [g.schemas] : []));
      if (described.validatedInside) {
        expect([key(r), validations.length]).toEqual([key(r), 0]);
        continue;
      }
      expect([key(r), validations.length]).toEqual([key(r), described.input ? 1 : 0]);
      const used = validations[0] ?? {};
      for (const part of ['params', 'query', 'body'] as const) {
        expect([key(r), part, used[part] === described.input?.[part]]).toEqual([key(r), part, true]);
      }
    }
  });

  it('agrees with the access matrix on who may call each API route', () => {
    const matrix: Record<string, Access[]> = { public: ['public', 'optional-session'], session: ['session'], member: ['member'], engineer: ['engineer'], admin: ['admin'] };
    const norm = (p: string) => p.replace(/:\w+/g, ':p');
    for (const c of accessMatrix) {
      const described = routeTable.find((d) => d.method.toUpperCase() === c.method && norm(d.path) === norm(c.path));
      expect([c.name, described?.access && matrix[c.access].includes(described.access)]).toEqual([c.name, true]);
    }
  });

  it('serves the OpenAPI document to anyone, with every mounted route in its {param} form', async () => {
    const res = await request(t.app).get('/api/openapi.json');
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/^application\/json/);
    expect(res.body.openapi).toMatch(/^3\.1\.\d+$/);
    const documented = Object.entries(res.body.paths as Record<string, Record<string, unknown>>).flatMap(([p, ops]) => Object.keys(ops).map((m) => `${m.toUpperCase()} ${p}`));
    expect(documented.sort()).toEqual(mounted.map((r) => `${r.method.toUpperCase()} ${r.path.replace(/:(\w+)/g, '{$1}')}`).sort());
  });
});
