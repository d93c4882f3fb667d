// Property tests: generated hostile bodies, queries and path parameters against every route of the table.
// Whatever arrives, the server answers below 500, in the JSON error shape when it refuses, and writes
// nothing when it refuses.
import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { call, defaultParams, fillPath, isErrorShape, routes, type CallResult, type RouteCase } from './routes';
import { buildWorld, rowCounts, type World } from './world';

let w: World;
beforeAll(async () => {
  w = await buildWorld();
});
afterAll(async () => {
  await w?.close();
});

const RUNS = Number(process.env.HOSTILE_RUNS ?? 30);
const MiB = 1024 * 1024;

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
const hugeString = () => 'a'.repeat(MiB + 64);

/** JSON text that no serializer would write: what a hostile client sends by hand. */
function rawHostileBodies(valid: Record<string, unknown>): fc.Arbitrary<{ raw: Buffer | string; contentType?: string }> {
  const keys = Object.keys(valid);
  const first = keys[0] ?? 'name';
  const withField = (fieldText: string) => {
    const rest = JSON.stringify(valid).slice(1);
    return `{${JSON.stringify(first)}:${fieldText}${rest.length > 1 ? ',' : ''}${rest.replace(new RegExp(`^"${first}":[^,}]*,?`), '')}`;
  };
  return fc.oneof(
    fc.constantFrom(
      { raw: withField('NaN') },
      { raw: withField('Infinity') },
      { raw: withField('-Infinity') },
      { raw: withField('1e999') },
      { raw: withField('-1e999') },
      { raw: withField('0x10') },
      { raw: withField('undefined') },
      { raw: `{"__proto__":{"isAdmin":true,"role":"admin"},${JSON.stringify(valid).slice(1)}` },
      { raw: `{"constructor":{"prototype":{"role":"admin"}},${JSON.stringify(valid).slice(1)}` },
      { raw: `${'['.repeat(10_000)}${']'.repeat(10_000)}` },
      { raw: `{"a":${'{"a":'.repeat(10_000)}1${'}'.repeat(10_000)}}` },
      { raw: `{${JSON.stringify(first)}:${'['.repeat(10_000)}${']'.repeat(10_000)}}` },
      { raw: '['.repeat(MiB + 10) },
      { raw: JSON.stringify({ ...valid, [first]: hugeString() }) },
      { raw: JSON.stringify(valid).slice(0, -1) },
      { raw: '' },
      { raw: 'null' },
      { raw: '"just a string"' },
      { raw: JSON.stringify(valid), contentType: 'text/plain' },
      { raw: JSON.stringify(valid), contentType: 'application/json; charset=latin1' },
      { raw: JSON.stringify(valid), contentType: 'application/x-www-form-urlencoded' },
    ),
    // Invalid UTF-8 inside a string field: a lone continuation byte, an overlong form, a truncated sequence.
    fc.constantFrom([0xff], [0xc0, 0xaf], [0xe2, 0x82], [0xed, 0xa0, 0x80]).map((bytes) => ({
      raw: Buffer.concat([Buffer.from(`{${JSON.stringify(first)}:"reef`), Buffer.from(bytes), Buffer.from(`"${JSON.stringify(valid).slice(1).replace(/^"[^"]*":("[^"]*"|[^,}]*),?/, ',').replace(/^,}/, '}')}`)]),
    })),
  );
}

type BodyInput = { json: unknown } | { raw: Buffer | string; contentType?: string };

function hostileBodies(valid: Record<string, unknown>): fc.Arbitrary<BodyInput> {
  const keys = Object.keys(valid);
  const replace = fc.record({ key: fc.constantFrom(...(keys.length > 0 ? keys : ['name'])), value: hostileValue }).map(({ key, value }) => ({
    json: { ...valid, [key]: value },
  }));
  const drop = fc.constantFrom(...(keys.length > 0 ? keys : ['name'])).map((key) => {
    const copy: Record<string, unknown> = { ...valid };
    delete copy[key];
    return { json: copy };
  });
  const unknownField = fc
    .record({ key: fc.oneof(fc.string({ minLength: 1, maxLength: 12 }), fc.constantFrom('isAdmin', 'role', 'teamId', 'id', 'createdBy', 'prototype')), value: hostileValue })
    .filter(({ key }) => !keys.includes(key) && key !== '__proto__')
    .map(({ key, value }) => ({ json: { ...valid, [key]: value } }));
  const whole = hostileValue.map((value) => ({ json: value }));
  return fc.oneof({ arbitrary: replace, weight: 4 }, { arbitrary: unknownField, weight: 2 }, drop, whole, { arbitrary: rawHostileBodies(valid), weight: 3 });
}

// Path parameters that must never be taken for an id: none coerces to a positive 31-bit integer.
const hostileId = fc.constantFrom('-1', '0', 'NaN', 'Infinity', '1.5', '2147483648', '9'.repeat(400), 'abc', '%00', '%ff', '%2e%2e%2f%2e%2e', "1'%20OR%20'1'='1", '%E2%80%AE1');
const hostileQuery = fc.oneof(
  fc.dictionary(fc.string({ minLength: 1, maxLength: 10 }), fc.string({ maxLength: 30 }), { maxKeys: 3 }).map((d) => new URLSearchParams(d).toString()),
  fc.constantFrom('format=xml', 'format=', 'format[]=csv', 'format=csv&format=json', 'view=../../x', 'runs=1,1', 'runs=', 'runs=-1,2', `runs=${'1,'.repeat(5000)}1`, 'rate=none', '%ff=%fe', 'role=admin', '__proto__[x]=1', `q=${'x'.repeat(9000)}`),
);

function caller(route: RouteCase): string | undefined {
  return route.access === 'public' ? undefined : w.admin.token;
}

const bodyRoutes = routes.filter((r) => r.body === 'json');
const paramRoutes = routes.filter((r) => /:(setId|imageId|runId|codebookId|userId|invitationId)/.test(r.path));
const queryRoutes = routes.filter((r) => r.method === 'GET' && r.path.startsWith('/api/teams/'));

/** Sends one generated request; returns the result and whether any table's row count changed. */
async function probe(route: RouteCase, url: string, input: BodyInput | null): Promise<{ res: CallResult; changed: string[] }> {
  const before = await rowCounts(w);
  const options: Parameters<typeof call>[3] = { token: caller(route) };
  if (input && 'json' in input) options.raw = JSON.stringify(input.json) ?? 'null';
  if (input && 'raw' in input) {
    options.raw = input.raw;
    options.contentType = input.contentType;
  }
  const res = await call(w, route, url, options);
  const after = await rowCounts(w);
  const changed = Object.keys(after).filter((k) => after[k] !== before[k]);
  return { res, changed };
}

/** The invariant of every generated request. */
function checkAnswer(route: RouteCase, res: CallResult, changed: string[]): void {
  expect(res.status, res.text.slice(0, 300)).toBeLessThan(500);
  if (res.status >= 400) {
    expect(isErrorShape(res.json), `not the error shape: ${res.text.slice(0, 300)}`).toBe(true);
    expect(changed, 'a refused request changed these tables').toEqual([]);
  } else {
    // Generated input that happens to be valid must do exactly what a valid call does.
    expect(res.status).toBe(route.ok);
  }
}

describe('generated bodies', () => {
  it.each(bodyRoutes.map((r) => [`${r.method} ${r.path}`, r] as const))('never make %s fail on our side or half-write', async (_label, route) => {
    const base = route.valid!(w) as Record<string, unknown>;
    await fc.assert(
      fc.asyncProperty(hostileBodies(base), async (input) => {
        const params = { ...defaultParams(w), ...(route.fresh ? await route.fresh(w) : {}) };
        const { res, changed } = await probe(route, fillPath(route.path, params), input);
        checkAnswer(route, res, changed);
        await w.t.composition.services.accounts.settle();
      }),
      { numRuns: RUNS, endOnFailure: true },
    );
  });
});

describe('generated path parameters', () => {
  it.each(paramRoutes.map((r) => [`${r.method} ${r.path}`, r] as const))('are refused by %s with 400 or 404', async (_label, route) => {
    const names = [...route.path.matchAll(/:([A-Za-z]+)/g)].map((m) => m[1]).filter((n) => n !== 'teamId');
    await fc.assert(
      fc.asyncProperty(fc.constantFrom(...names), hostileId, async (name, id) => {
        const params = { ...defaultParams(w), ...(route.fresh ? await route.fresh(w) : {}) };
        const url = fillPath(route.path, params).replace(encodeURIComponent(String(params[name])), id);
        const input = route.body === 'json' ? { json: route.valid!(w) } : null;
        const { res, changed } = await probe(route, url, input);
        checkAnswer(route, res, changed);
        expect([400, 404]).toContain(res.status);
      }),
      { numRuns: Math.min(RUNS, 20), endOnFailure: true },
    );
  });
});

describe('generated query strings', () => {
  it.each(queryRoutes.map((r) => [`${r.method} ${r.path}`, r] as const))('never make %s fail on our side', async (_label, route) => {
    await fc.assert(
      fc.asyncProperty(hostileQuery, async (query) => {
        const { res, changed } = await probe(route, `${fillPath(route.path, defaultParams(w))}?${query}`, null);
        expect(res.status, res.text.slice(0, 300)).toBeLessThan(500);
        if (res.status >= 400) expect(isErrorShape(res.json), res.text.slice(0, 300)).toBe(true);
        // A read changes nothing; only an export that went through is audited, and a reconstruction computed for
        // the first time is kept (one row, the first time only).
        const kept = res.status < 400 && route.name === 'reconstruction' ? ['reconstructions'] : [];
        expect(changed.filter((table) => !kept.includes(table))).toEqual(res.status < 400 && route.name === 'export a codebook' ? ['audit_log'] : []);
      }),
      { numRuns: Math.min(RUNS, 20), endOnFailure: true },
    );
  });
});

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
    const before = await rowCounts(w);
    const res = await call(w, { method: 'POST', body: 'json' }, `/api/teams/${w.teamId}/image-sets`, {
      token: w.admin.token,
      raw: Buffer.concat([Buffer.from('{"name":"reef '), Buffer.from([0xc3, 0x28]), Buffer.from('"}')]),
    });
    expect(res.status).toBe(400);
    expect(res.json).toMatchObject({ error: { code: 'bad_request', message: expect.stringMatching(/UTF-8/) } });
    expect(await rowCounts(w)).toEqual(before);
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
