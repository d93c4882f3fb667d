// The OpenAPI document's structure, checked against the OpenAPI Specification 3.1 (spec.openapis.org/oas/v3.1.1)
// by hand, since no OpenAPI validator is installed; and the JSON Schema validator the API tests judge responses with.
import { describe, expect, it } from 'vitest';
import { z } from 'zod';
import { errorBody } from '../../../server/contracts';
import { jsonSchemaOf, openApiDocument } from '../../../server/http/description/openapi';
import { routeTable } from '../../../server/http/description/route-table';
import { refResolver, unknownKeywords, validateJson, type Schema } from '../../helpers/json-schema';

const codebookSchemaUrl = 'http://studio.example/api/schemas/codebook.schema.json';
const doc = openApiDocument({ serverUrl: 'http://studio.example', version: '9.9.9', codebookSchemaUrl }) as {
  openapi: string;
  info: { title: string; version: string };
  paths: Record<string, Record<string, Operation>>;
  tags: { name: string }[];
  components: { schemas: Record<string, Schema>; securitySchemes: Record<string, unknown> };
};
type Parameter = { name: string; in: string; required?: boolean; schema: Schema };
type Media = Record<string, { schema?: Schema }>;
type Operation = {
  operationId: string;
  summary: string;
  tags: string[];
  security: Record<string, string[]>[];
  parameters: Parameter[];
  requestBody?: { content: Media };
  responses: Record<string, { description: string; content?: Media }>;
  'x-cellwright-access': string;
  'x-cellwright-roles'?: string[];
};

const operations = Object.entries(doc.paths).flatMap(([path, ops]) => Object.entries(ops).map(([method, op]) => ({ path, method, op })));

/** Every Schema Object in the document, with where it is. */
function schemas(): { where: string; schema: Schema }[] {
  const out = Object.entries(doc.components.schemas).map(([name, schema]) => ({ where: `#/components/schemas/${name}`, schema }));
  for (const { path, method, op } of operations) {
    const at = `${method.toUpperCase()} ${path}`;
    op.parameters.forEach((p) => out.push({ where: `${at} parameter ${p.name}`, schema: p.schema }));
    for (const [type, m] of Object.entries(op.requestBody?.content ?? {})) if (m.schema) out.push({ where: `${at} request ${type}`, schema: m.schema });
    for (const [status, r] of Object.entries(op.responses)) {
      for (const [type, m] of Object.entries(r.content ?? {})) if (m.schema) out.push({ where: `${at} ${status} ${type}`, schema: m.schema });
    }
  }
  return out;
}

describe('the OpenAPI document', () => {
  it('has the fixed fields OpenAPI 3.1 requires (§4.8.1 OpenAPI Object, §4.8.2 Info Object)', () => {
    expect(doc.openapi).toMatch(/^3\.1\.\d+$/);
    expect(doc.info.title).toBe('Cellwright API');
    expect(doc.info.version).toBe('9.9.9');
    expect(operations).toHaveLength(routeTable.length);
  });

  it('names each path template with {param} segments, each declared once as a required path parameter (§4.8.8, §4.8.12)', () => {
    for (const { path, method, op } of operations) {
      expect(path.startsWith('/')).toBe(true);
      expect(path).not.toMatch(/:\w/);
      expect(['get', 'put', 'post', 'delete', 'options', 'head', 'patch', 'trace']).toContain(method);
      const templated = [...path.matchAll(/\{(\w+)\}/g)].map((m) => m[1]).sort();
      const inPath = op.parameters.filter((p) => p.in === 'path');
      expect([path, inPath.map((p) => p.name).sort()]).toEqual([path, templated]);
      expect(inPath.every((p) => p.required === true)).toBe(true);
      for (const p of op.parameters) expect(['path', 'query', 'header', 'cookie']).toContain(p.in);
      const names = op.parameters.map((p) => `${p.in}:${p.name}`);
      expect(new Set(names).size).toBe(names.length);
    }
  });

  it('gives every operation a unique operationId, a summary, a declared tag and at least one success response (§4.8.10)', () => {
    const ids = operations.map(({ op }) => op.operationId);
    expect(new Set(ids).size).toBe(ids.length);
    const tags = new Set(doc.tags.map((t) => t.name));
    for (const { path, op } of operations) {
      expect(op.summary.length).toBeGreaterThan(0);
      expect(op.tags.every((t) => tags.has(t))).toBe(true);
      const statuses = Object.keys(op.responses);
      expect([path, statuses.some((s) => /^[23]\d\d$/.test(s))]).toEqual([path, true]);
      for (const s of statuses) expect(s).toMatch(/^[1-5]\d\d$/);
      for (const r of Object.values(op.responses)) expect(r.description.length).toBeGreaterThan(0);
    }
  });

  it('answers every 4xx with the one error shape, and names only declared security schemes', () => {
    const schemes = new Set(Object.keys(doc.components.securitySchemes));
    for (const { path, op } of operations) {
      for (const [status, r] of Object.entries(op.responses)) {
        if (status.startsWith('4')) expect([path, status, r.content]).toEqual([path, status, { 'application/json': { schema: { $ref: '#/components/schemas/Error' } } }]);
      }
      for (const requirement of op.security) for (const name of Object.keys(requirement)) expect(schemes.has(name)).toBe(true);
    }
    expect(doc.components.schemas.Error).toEqual(jsonSchemaOf(errorBody, 'output'));
  });

  it('states who may call each route, with the roles of team routes', () => {
    const get = (p: string, m = 'get') => doc.paths[p][m];
    expect(get('/api/health').security).toEqual([]);
    expect(get('/api/teams/{teamId}/runs')['x-cellwright-roles']).toEqual(['admin', 'engineer', 'viewer']);
    expect(get('/api/teams/{teamId}/runs', 'post')['x-cellwright-roles']).toEqual(['admin', 'engineer']);
    expect(get('/api/teams/{teamId}/runs/{runId}', 'delete')['x-cellwright-roles']).toEqual(['admin']);
    expect(get('/api/teams/{teamId}/runs/{runId}', 'delete').responses['403']).toBeDefined();
    expect(get('/api/me').responses['403']).toBeUndefined();
    expect(get('/api/me').responses['401']).toBeDefined();
    // The app-wide checks: changing requests from another site are refused, and so is any body of an unknown type.
    expect(get('/api/auth/login', 'post').responses['403'].description).toMatch(/another site/);
    expect(get('/api/health').responses['415']).toBeDefined();
  });

  it('refers to the served codebook schema for the export and import bodies', () => {
    const path = '/api/teams/{teamId}/codebooks';
    expect(doc.paths[`${path}/{codebookId}/export`].get.responses['200'].content!['application/json'].schema).toEqual({ $ref: codebookSchemaUrl });
    expect(doc.paths[`${path}/import`].post.requestBody!.content['application/json'].schema).toEqual({ $ref: codebookSchemaUrl });
  });

  it('uses only JSON Schema keywords the test validator knows, so no response check passes unread', () => {
    const all = schemas();
    expect(all.length).toBeGreaterThan(100);
    expect(all.flatMap(({ where, schema }) => unknownKeywords(schema).map((k) => `${where} ${k}`))).toEqual([]);
  });

  it('describes responses as the server writes them: objects refuse fields the contract does not name', () => {
    const me = doc.paths['/api/me'].get.responses['200'].content!['application/json'].schema as { additionalProperties?: unknown; properties: Record<string, { additionalProperties?: unknown }> };
    expect(me.additionalProperties).toBe(false);
    expect(me.properties.user.additionalProperties).toBe(false);
  });
});

describe('the JSON Schema validator of the tests', () => {
  const schema = jsonSchemaOf(
    z.object({ id: z.number().int().min(1), name: z.string().min(2).max(3), tags: z.array(z.enum(['a', 'b'])).max(2), note: z.string().nullable().optional() }),
    'output',
  );

  it('accepts a value that fits', () => {
    expect(validateJson(schema, { id: 3, name: 'ab', tags: ['a'], note: null })).toEqual([]);
  });

  it.each([
    ['a missing field', { name: 'ab', tags: [] }],
    ['an extra field', { id: 1, name: 'ab', tags: [], more: true }],
    ['a fraction for an integer', { id: 1.5, name: 'ab', tags: [] }],
    ['a number below the minimum', { id: 0, name: 'ab', tags: [] }],
    ['a string too long (in code points)', { id: 1, name: 'abcd', tags: [] }],
    ['a value outside the enum', { id: 1, name: 'ab', tags: ['c'] }],
    ['too many items', { id: 1, name: 'ab', tags: ['a', 'b', 'a'] }],
    ['the wrong type', { id: '1', name: 'ab', tags: [] }],
  ])('refuses %s', (_what, value) => {
    expect(validateJson(schema, value).length).toBeGreaterThan(0);
  });

  it('follows $ref into the document and refuses a schema keyword it does not know', () => {
    const root = { defs: { Error: jsonSchemaOf(errorBody, 'output') } };
    expect(validateJson({ $ref: '#/defs/Error' }, { error: { code: 'x', message: 'y' } }, refResolver(root))).toEqual([]);
    expect(validateJson({ $ref: '#/defs/Error' }, { error: { code: 'x' } }, refResolver(root)).length).toBeGreaterThan(0);
    expect(() => validateJson({ dependentRequired: { a: ['b'] } }, {})).toThrow(/does not know/);
  });
});
