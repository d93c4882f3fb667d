// Hostile input against every route of the table, the same every run: an explicit table of route × class of
// hostile body (tests/api/hostile/bodies.ts; each cell one request or more), every hostile path parameter and
// query string, then fast-check properties under a fixed seed for random cases beyond the table. Whatever
// arrives, the server answers below 500, answers a refusal in the JSON error shape, changes no row and no
// stored file when it refuses, and leaves Object.prototype alone. It prints what it sent at the end.
//
// The assertions are invariants, not today's status codes, so they hold while the server learns to refuse
// earlier (401 before parsing an anonymous body, 415 for a compressed one).
import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { snapshotDiff, type Snapshot, type Snapshotter } from '../../helpers/snapshot';
import { fieldsOf, hostileBodies, hostileClasses, type BodyPlan, type HostileBody } from './bodies';
import { call, defaultParams, fillPath, isErrorShape, jsonBodyLimit, routes, type RouteCase } from './routes';
import { send, type RawAnswer } from './send';
import { buildWorld, throwawaySession, worldSnapshotter, type World } from './world';

/** fast-check's seed for every property below: the same random cases every run. */
const SEED = 20260909;
const RUNS = Number(process.env.HOSTILE_RUNS ?? 8);
const fcParams = { seed: SEED, numRuns: RUNS, endOnFailure: true };

let w: World;
let snapshots: Snapshotter;
beforeAll(async () => {
  // Sign-in and reset are limited per address; a limit the test never reaches lets every body reach the parser.
  w = await buildWorld({ LOGIN_RATE_LIMIT: '1000000' });
  snapshots = await worldSnapshotter(w);
});
afterAll(async () => {
  printSummary();
  await w?.close();
});

// --- what was sent ---------------------------------------------------------------------------------------

const label = (r: RouteCase) => `${r.method} ${r.path}${r.query ? ` (${r.name})` : ''}`;
const sent = { requests: 0, server5xx: 0, statuses: new Map<number, number>(), byKind: new Map<string, number>(), cells: new Map<string, number>() };

function count(kind: string, status: number, cell?: string): void {
  sent.requests += 1;
  if (status >= 500) sent.server5xx += 1;
  sent.statuses.set(status, (sent.statuses.get(status) ?? 0) + 1);
  sent.byKind.set(kind, (sent.byKind.get(kind) ?? 0) + 1);
  if (cell) sent.cells.set(cell, (sent.cells.get(cell) ?? 0) + 1);
}

function printSummary(): void {
  const covered = routes.filter((r) => hostileClasses.every((c) => (sent.cells.get(`${label(r)}|${c}`) ?? 0) > 0)).length;
  const statuses = [...sent.statuses].sort(([a], [b]) => a - b).map(([s, n]) => `${s}×${n}`).join(' ');
  const kinds = [...sent.byKind].map(([k, n]) => `${k} ${n}`).join(', ');
  console.log(
    [
      `hostile input: ${routes.length} routes × ${hostileClasses.length} body classes (${hostileClasses.join(', ')}); ` +
        `${covered} of ${routes.length} routes received every class`,
      `requests sent: ${sent.requests} (${kinds})`,
      `5xx answers: ${sent.server5xx}; statuses: ${statuses}`,
    ].join('\n'),
  );
}

// --- one request and its invariants ------------------------------------------------------------------------

/**
 * The fingerprint after the last refused request, reused as the next request's "before" while nothing else
 * has written since (a refusal writes nothing, and it is only reused once that was checked). Fingerprints
 * (a CHECKSUM TABLE per table, tests/helpers/snapshot.ts) keep thousands of requests cheap; the access matrix
 * compares full row snapshots.
 */
let lastClean: Snapshot | null = null;

/** The world's path values plus a fresh target for consuming routes, and the session to call with. */
interface Target {
  params: Record<string, number | string>;
  token?: string;
}
const targets = new Map<RouteCase, Target>();

/** Reused until a call succeeds: only a success consumes a target (or ends the session it used). */
async function targetOf(route: RouteCase): Promise<Target> {
  const known = targets.get(route);
  if (known) return known;
  lastClean = null;
  const fresh = route.fresh ? await route.fresh(w) : {};
  let token = route.access === 'public' ? undefined : w.admin.token;
  if (route.revokesSessions && route.access !== 'public') token = (await throwawaySession(w, 'admin')).token;
  const target = { params: { ...defaultParams(w), ...fresh }, token };
  // Making a target may queue mail (an invitation); its delivery must not land inside the next probe's window.
  await w.t.composition.services.accounts.settle();
  targets.set(route, target);
  return target;
}

function urlOf(route: RouteCase, params: Record<string, number | string>): string {
  return fillPath(route.path, params) + (route.query ? `?${route.query(w)}` : '');
}

const prototypeKeys = () => Object.getOwnPropertyNames(Object.prototype).sort().join();

interface Probe {
  route: RouteCase;
  kind: string;
  what: string;
  url: string;
  token?: string;
  body?: HostileBody;
  /** Set for the body classes of the route × class table. */
  cell?: string;
  /** The request must be refused (a hostile id is never read as one; no session, no entry). */
  mustRefuse?: boolean;
}

/** Sends one request and returns what broke an invariant (nothing, normally). */
async function probe(p: Probe): Promise<string[]> {
  const before = lastClean ?? (await snapshots.fingerprint());
  const proto = prototypeKeys();
  const headers: Record<string, string> = { ...(p.body?.headers ?? {}) };
  if (p.token) headers.Authorization = `Bearer ${p.token}`;
  let res: RawAnswer;
  try {
    res = await send(w.base, { method: p.route.method, path: p.url, headers, body: p.body?.body, chunked: p.body?.chunked });
  } catch (err) {
    count(p.kind, 0, p.cell);
    lastClean = null;
    return [`${p.what}: ${(err as Error).message}`];
  }
  count(p.kind, res.status, p.cell);
  const problems: string[] = [];
  if (res.status >= 500) problems.push(`answered ${res.status}: ${res.text.slice(0, 200)}`);
  if (prototypeKeys() !== proto) problems.push('Object.prototype gained or lost a property');
  if (p.mustRefuse && res.status < 400) problems.push(`accepted with ${res.status}`);
  if (res.status >= 400) {
    if (!isErrorShape(res.json)) problems.push(`${res.status} not in the error shape: ${res.text.slice(0, 200)}`);
    const after = await snapshots.fingerprint();
    const diff = snapshotDiff(before, after);
    if (diff.length > 0) problems.push(`refused with ${res.status} but changed: ${diff.join('; ')}`);
    lastClean = after;
  } else {
    // Input that is accepted must do what a valid call does.
    if (res.status !== p.route.ok) problems.push(`accepted with ${res.status}; a valid call answers ${p.route.ok}`);
    await w.t.composition.services.accounts.settle();
    lastClean = null;
    if (p.route.fresh || p.route.revokesSessions) targets.delete(p.route);
  }
  return problems.map((m) => `${p.what}: ${m}`);
}

async function planOf(route: RouteCase): Promise<BodyPlan> {
  const valid = route.body === 'json' ? await route.valid!(w) : {};
  return {
    valid,
    fields: route.body === 'json' ? fieldsOf(valid, route.schema) : [],
    limit: route.bodyLimit ?? jsonBodyLimit,
    // A route that takes no JSON body gets the first bodies of each class, not every field variant.
    perClass: route.body === 'json' ? undefined : 2,
  };
}

// --- the table -------------------------------------------------------------------------------------------

describe('the route table', () => {
  it('gives every JSON route a valid body its own schema accepts', async () => {
    const failures: string[] = [];
    for (const route of routes.filter((r) => r.body === 'json')) {
      if (!route.schema) failures.push(`${label(route)}: no schema`);
      else {
        const parsed = route.schema.safeParse(await route.valid!(w));
        if (!parsed.success) failures.push(`${label(route)}: ${parsed.error.message}`);
      }
    }
    expect(failures).toEqual([]);
  });
});

/** Classes also sent with no session to routes that need one: each must be refused, and change nothing. */
const anonymousClasses = new Set(['malformed', 'deep-nesting', 'oversized', 'gzip']);

describe('every route × every class of hostile body', () => {
  it.each(routes.map((r) => [label(r), r] as const))('%s: below 500, refusals in the error shape, nothing changed', async (name, route) => {
    const problems: string[] = [];
    const plan = await planOf(route);
    for (const body of hostileBodies(plan)) {
      const target = await targetOf(route);
      const what = `${body.cls} / ${body.label}`;
      problems.push(...(await probe({ route, kind: 'body', what, url: urlOf(route, target.params), token: target.token, body, cell: `${name}|${body.cls}` })));
    }
    if (route.access !== 'public') {
      for (const body of hostileBodies({ ...plan, perClass: 1 })) {
        if (!anonymousClasses.has(body.cls)) continue;
        const target = await targetOf(route);
        const what = `anonymous ${body.cls} / ${body.label}`;
        problems.push(...(await probe({ route, kind: 'anonymous body', what, url: urlOf(route, target.params), body, mustRefuse: true })));
      }
    }
    expect(problems).toEqual([]);
  });

  it('sent every class of body to every route', () => {
    const missing = routes.flatMap((r) => hostileClasses.filter((c) => !sent.cells.get(`${label(r)}|${c}`)).map((c) => `${label(r)} × ${c}`));
    expect(missing).toEqual([]);
  });
});

// Path values that must never be taken for an id or a token: none is the canonical decimal form of a
// positive 31-bit integer, nor a token of the issued form (32 random bytes, base64url).
const hostileIds = [
  '0',
  '-1',
  '01',
  '1e0',
  '1.5',
  '2147483648',
  '9'.repeat(400),
  '%00',
  '%ff',
  '%2e%2e%2f%2e%2e',
  "1'%20OR%20'1'='1",
  '%E2%80%AE1',
];
const paramNames = (route: RouteCase) => [...route.path.matchAll(/:([A-Za-z]+)/g)].map((m) => m[1]);
const paramRoutes = routes.filter((r) => paramNames(r).length > 0);

function withParam(route: RouteCase, params: Record<string, number | string>, name: string, raw: string): string {
  // Hostile values go in as written: they are already what a client puts on the wire.
  return route.path.replace(/:([A-Za-z]+)/g, (_m, key: string) => (key === name ? raw : encodeURIComponent(String(params[key])))) + (route.query ? `?${route.query(w)}` : '');
}

async function validBodyOf(route: RouteCase): Promise<HostileBody | undefined> {
  if (route.body !== 'json') return undefined;
  return { cls: 'malformed', label: 'valid', body: Buffer.from(JSON.stringify(await route.valid!(w))), headers: { 'Content-Type': 'application/json' } };
}

describe('every hostile path parameter', () => {
  it.each(paramRoutes.map((r) => [label(r), r] as const))('is refused by %s, below 500 and changing nothing', async (_name, route) => {
    const problems: string[] = [];
    for (const name of paramNames(route)) {
      for (const id of hostileIds) {
        const target = await targetOf(route);
        const url = withParam(route, target.params, name, id);
        const what = `:${name}=${id.slice(0, 20)}`;
        problems.push(...(await probe({ route, kind: 'path parameter', what, url, token: target.token, body: await validBodyOf(route), mustRefuse: true })));
      }
    }
    expect(problems).toEqual([]);
  });
});

const hostileQueries = [
  'format=xml',
  'format[]=csv',
  'format=csv&format=json',
  'view=../../x',
  'runs=',
  'runs=-1,2',
  `runs=${'1,'.repeat(5000)}1`,
  'role=admin&name=%00',
  '%ff=%fe',
  '__proto__[x]=1&constructor[prototype][x]=1',
  `q=${'x'.repeat(9000)}`,
];
const getRoutes = routes.filter((r) => r.method === 'GET');

describe('every hostile query string', () => {
  it.each(getRoutes.map((r) => [label(r), r] as const))('is answered by %s below 500, refusals in the error shape', async (_name, route) => {
    const problems: string[] = [];
    for (const query of hostileQueries) {
      const target = await targetOf(route);
      problems.push(...(await probe({ route, kind: 'query string', what: `?${query.slice(0, 40)}`, url: `${fillPath(route.path, target.params)}?${query}`, token: target.token })));
    }
    expect(problems).toEqual([]);
  });
});

// --- random cases beyond the table (fast-check, fixed seed) -------------------------------------------

// Values no field of any contract accepts everywhere: wrong types, extremes, odd strings.
const hostileValue: fc.Arbitrary<unknown> = fc.oneof(
  fc.string(),
  fc.string({ unit: 'grapheme', maxLength: 50 }),
  fc.constantFrom('', ' ', '\u0000', '\u202e', '<script>alert(1)</script>', "'; DROP TABLE users; --", '../../etc/passwd', '%00', '\ud800'),
  fc.integer(),
  fc.double(),
  fc.constantFrom(-1, 0, -0, 2 ** 31, 2 ** 53 + 1, 1e308, -1e308, Number.MIN_VALUE),
  fc.boolean(),
  fc.constant(null),
  fc.array(fc.anything(), { maxLength: 5 }),
  fc.dictionary(fc.string({ maxLength: 8 }), fc.jsonValue(), { maxKeys: 4 }),
  fc.anything({ maxDepth: 3 }),
);

/** Random edits of the valid body: a field replaced or dropped, an unknown field added, the whole body replaced. */
function randomBodies(valid: Record<string, unknown>): fc.Arbitrary<unknown> {
  const keys = Object.keys(valid).length > 0 ? Object.keys(valid) : ['name'];
  const replace = fc.record({ key: fc.constantFrom(...keys), value: hostileValue }).map(({ key, value }) => ({ ...valid, [key]: value }));
  const drop = fc.constantFrom(...keys).map((key) => Object.fromEntries(Object.entries(valid).filter(([k]) => k !== key)));
  const unknownField = fc
    .record({ key: fc.oneof(fc.string({ minLength: 1, maxLength: 12 }), fc.constantFrom('isAdmin', 'role', 'teamId', 'id', 'createdBy')), value: hostileValue })
    .filter(({ key }) => !keys.includes(key) && key !== '__proto__')
    .map(({ key, value }) => ({ ...valid, [key]: value }));
  return fc.oneof({ arbitrary: replace, weight: 4 }, { arbitrary: unknownField, weight: 2 }, drop, hostileValue);
}

const jsonRoutes = routes.filter((r) => r.body === 'json');

describe('random bodies (fast-check, fixed seed)', () => {
  it.each(jsonRoutes.map((r) => [label(r), r] as const))('never make %s fail on our side or half-write', async (_name, route) => {
    const valid = (await route.valid!(w)) as Record<string, unknown>;
    await fc.assert(
      fc.asyncProperty(randomBodies(valid), async (value) => {
        const target = await targetOf(route);
        const body: HostileBody = { cls: 'wrong-type', label: 'random', body: Buffer.from(JSON.stringify(value) ?? 'null'), headers: { 'Content-Type': 'application/json' } };
        expect(await probe({ route, kind: 'random body', what: `random body ${JSON.stringify(value)?.slice(0, 120)}`, url: urlOf(route, target.params), token: target.token, body })).toEqual([]);
      }),
      fcParams,
    );
  });
});

describe('random path parameters and query strings (fast-check, fixed seed)', () => {
  // Never the canonical form of an id that could exist: a random 1 would delete the world's own set.
  const canonicalId = /^[1-9][0-9]{0,9}$/;
  const randomId = fc
    .oneof(fc.integer().map(String), fc.double().map(String), fc.string({ maxLength: 24 }).map(encodeURIComponent))
    .filter((id) => !canonicalId.test(id) || Number(id) > 2 ** 31 - 1);

  it.each(paramRoutes.map((r) => [label(r), r] as const))('never make %s take a random non-id for an id', async (_name, route) => {
    await fc.assert(
      fc.asyncProperty(fc.constantFrom(...paramNames(route)), randomId, async (name, id) => {
        const target = await targetOf(route);
        const url = withParam(route, target.params, name, id);
        const what = `:${name}=${id}`;
        expect(await probe({ route, kind: 'random path parameter', what, url, token: target.token, body: await validBodyOf(route), mustRefuse: true })).toEqual([]);
      }),
      fcParams,
    );
  });

  const randomQuery = fc
    .dictionary(fc.string({ minLength: 1, maxLength: 10 }), fc.string({ maxLength: 30 }), { maxKeys: 3 })
    .map((d) => new URLSearchParams(d).toString());

  it.each(getRoutes.map((r) => [label(r), r] as const))('never make %s fail on our side', async (_name, route) => {
    await fc.assert(
      fc.asyncProperty(randomQuery, async (query) => {
        const target = await targetOf(route);
        expect(await probe({ route, kind: 'random query string', what: `?${query}`, url: `${fillPath(route.path, target.params)}?${query}`, token: target.token })).toEqual([]);
      }),
      fcParams,
    );
  });
});

// --- after all of it -------------------------------------------------------------------------------------

describe('after all of it', () => {
  it('still reports itself healthy', async () => {
    const res = await call(w, { method: 'GET', body: 'none' }, '/api/health');
    expect(res.status).toBe(200);
    expect(res.json).toMatchObject({ status: 'ok', database: 'up' });
  });

  it('answers a body nested 10 000 deep with a 400, not a crash', async () => {
    const res = await call(w, { method: 'POST', body: 'json' }, `/api/teams/${w.teamId}/image-sets`, {
      token: w.admin.token,
      raw: `{"name":${'{"a":'.repeat(10_000)}1${'}'.repeat(10_000)}}`,
    });
    expect(res.status).toBe(400);
    expect(isErrorShape(res.json)).toBe(true);
  });

  it('refuses a name carrying invalid UTF-8 bytes with 400 and stores nothing', async () => {
    const before = await snapshots.take();
    const res = await call(w, { method: 'POST', body: 'json' }, `/api/teams/${w.teamId}/image-sets`, {
      token: w.admin.token,
      raw: Buffer.concat([Buffer.from('{"name":"reef '), Buffer.from([0xc3, 0x28]), Buffer.from('"}')]),
    });
    expect(res.status).toBe(400);
    expect(res.json).toMatchObject({ error: { code: 'bad_request', message: expect.stringMatching(/UTF-8/) } });
    expect(snapshotDiff(before, await snapshots.take())).toEqual([]);
  });

  it('never lets a __proto__ key in a body reach an object prototype', async () => {
    const res = await call(w, { method: 'POST', body: 'json' }, `/api/teams/${w.teamId}/image-sets`, {
      token: w.admin.token,
      raw: '{"name":"Proto probe","__proto__":{"polluted":true}}',
    });
    expect(res.status).toBe(400);
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
  });
});
