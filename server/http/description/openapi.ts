import { z } from 'zod';
import { errorBody, pathId, roles as allRoles, type Role } from '../../contracts';
import { sessionCookieName } from '../middleware/authenticate';
import { routeTable, type Access, type Content, type RouteDescription } from './route-table';

/** A JSON Schema (draft 2020-12) or an OpenAPI object: plain JSON. */
export type Json = { [key: string]: unknown };

export interface OpenApiOptions {
  /** PUBLIC_URL: the server the paths are relative to. */
  serverUrl: string;
  version: string;
  /** The $id of the codebook format's JSON Schema, which the API serves itself. */
  codebookSchemaUrl: string;
}

/** The roles each team access admits (viewer < engineer < admin). */
export const accessRoles: Partial<Record<Access, readonly Role[]>> = {
  member: allRoles,
  engineer: ['admin', 'engineer'],
  admin: ['admin'],
};

const signedIn = [{ sessionCookie: [] }, { bearerToken: [] }];
// OpenAPI 3.1 §4.8.10: an empty Security Requirement Object makes authentication optional; an empty list, none.
const security: Record<Access, Json[]> = {
  public: [],
  'optional-session': [{}, ...signedIn],
  session: signedIn,
  member: signedIn,
  engineer: signedIn,
  admin: signedIn,
  worker: [{ workerToken: [] }],
};

const accessText: Record<Access, string> = {
  public: 'Anyone; no session needed.',
  'optional-session': 'Anyone; a signed-in caller is recognised.',
  session: 'Any signed-in user.',
  member: 'Any member of the team (viewer, engineer or admin).',
  engineer: 'Engineers and admins of the team.',
  admin: 'Admins of the team.',
  worker: 'A compute worker, with its own Bearer credential (never a user’s session).',
};

/**
 * JSON Schema of a contract. Requests are described as the client sends them (io: 'input': before defaults,
 * coercion and transforms), responses as the server writes them (io: 'output'). Draft 2020-12 is the dialect of
 * OpenAPI 3.1 Schema Objects (OpenAPI 3.1 §4.8.24), so each schema's own $schema is dropped.
 */
export function jsonSchemaOf(schema: z.ZodType, io: 'input' | 'output'): Json {
  const { $schema: _dialect, ...rest } = z.toJSONSchema(schema, { target: 'draft-2020-12', io }) as Json;
  return rest;
}

const openApiPath = (path: string) => path.replace(/:(\w+)/g, '{$1}');
const pathNames = (path: string) => [...path.matchAll(/:(\w+)/g)].map((m) => m[1]);
const operationId = (r: RouteDescription) =>
  `${r.method}${r.path.split('/').filter(Boolean).map((part) => (part.startsWith(':') ? `By${part[1].toUpperCase()}${part.slice(2)}` : part.replace(/[^A-Za-z0-9]+(.)?/g, (_, c: string | undefined) => (c ?? '').toUpperCase())).replace(/^./, (c) => c.toUpperCase())).join('')}`;

function contentSchema(content: Content, opts: OpenApiOptions, io: 'input' | 'output'): Json | undefined {
  if (content === 'binary') return undefined; // OpenAPI 3.1 §4.8.14.3: binary content needs no schema
  if (content === 'text') return { type: 'string' };
  if (content === 'object') return { type: 'object' };
  if ('ref' in content) return { $ref: opts.codebookSchemaUrl };
  return jsonSchemaOf(content, io);
}

function media(content: Partial<Record<string, Content>>, opts: OpenApiOptions, io: 'input' | 'output'): Json {
  return Object.fromEntries(
    Object.entries(content).map(([type, c]) => {
      const schema = contentSchema(c!, opts, io);
      return [type, schema ? { schema } : {}];
    }),
  );
}

function parameters(r: RouteDescription): Json[] {
  const params = r.input?.params ? jsonSchemaOf(r.input.params, 'input') : { properties: {} };
  const declared = (params.properties ?? {}) as Record<string, Json>;
  // A router may take :teamId from its mount path without validating it itself (the role check does).
  const fallback = jsonSchemaOf(pathId, 'input');
  const out: Json[] = pathNames(r.path).map((name) => ({ name, in: 'path', required: true, schema: declared[name] ?? fallback }));
  if (r.input?.query) {
    const query = jsonSchemaOf(r.input.query, 'input');
    const required = new Set((query.required as string[] | undefined) ?? []);
    for (const [name, schema] of Object.entries((query.properties ?? {}) as Record<string, Json>)) {
      out.push({ name, in: 'query', required: required.has(name), schema });
    }
  }
  return out;
}

/** The 4xx answers that follow from who may call a route and what it reads, plus the ones it lists itself. */
export function errorStatuses(r: RouteDescription): Record<number, string> {
  const out: Record<number, string> = {};
  const readsJson = Boolean(r.input?.body || r.rawBody?.mediaType === 'application/json' || r.readsJsonBody);
  const why400: string[] = [];
  if (r.input || r.rawBody) why400.push('input that does not fit the schemas (validation_failed, with details per field)');
  if (readsJson) why400.push('a body that is not valid JSON in UTF-8');
  // Express decodes path parameters before any handler runs and refuses a malformed percent-encoding.
  if (pathNames(r.path).length > 0) why400.push('a path segment that is not valid percent-encoding');
  if (why400.length > 0) out[400] = `The request is not valid: ${why400.join('; or ')}`;
  if (r.access === 'worker') out[401] = 'No valid worker credential';
  else if (r.access !== 'public' && r.access !== 'optional-session') out[401] = 'No live session';
  const refusals: string[] = [];
  if (r.access === 'engineer' || r.access === 'admin') refusals.push(`a member without the ${accessRoles[r.access]!.join(' or ')} role`);
  // server/app.ts: originCheck and refuseCrossSiteMutations judge every changing request under /api.
  if (r.method !== 'get' && r.path.startsWith('/api/')) refusals.push('a request from another site (Origin, Referer or Sec-Fetch-Site)');
  if (refusals.length > 0) out[403] = `Refused: ${refusals.join('; or ')}`;
  if (pathNames(r.path).length > 0) out[404] = r.path.includes(':teamId') ? 'No such object in the team, or the caller is not a member of the team' : 'No such object';
  if (readsJson) out[413] = 'The body is over the caller’s limit';
  // server/app.ts: requireKnownBodyType and requireIdentityEncoding judge any body sent under /api, whatever the route.
  if (r.path.startsWith('/api/')) out[415] = 'A body was sent in a type other than JSON (or multipart for uploads), or compressed';
  return { ...out, ...r.errors };
}

function operation(r: RouteDescription, opts: OpenApiOptions): Json {
  const responses: Json = {};
  for (const [status, res] of Object.entries(r.responses)) {
    responses[status] = { description: res.description, ...(res.content ? { content: media(res.content, opts, 'output') } : {}) };
  }
  for (const [status, why] of Object.entries(errorStatuses(r))) {
    responses[status] = { description: why, content: { 'application/json': { schema: { $ref: '#/components/schemas/Error' } } } };
  }
  const roles = accessRoles[r.access];
  const op: Json = {
    operationId: operationId(r),
    summary: r.summary,
    description: `Who may call it: ${accessText[r.access]}`,
    tags: [r.tag],
    security: security[r.access],
    'x-cellwright-access': r.access,
    ...(roles ? { 'x-cellwright-roles': roles } : {}),
    parameters: parameters(r),
    responses,
  };
  if (r.input?.body) op.requestBody = { required: true, content: { 'application/json': { schema: jsonSchemaOf(r.input.body, 'input') } } };
  if (r.rawBody) op.requestBody = { required: true, description: r.rawBody.description, content: media({ [r.rawBody.mediaType]: r.rawBody.content }, opts, 'input') };
  return op;
}

/** The OpenAPI 3.1 document of every route in the table; built from the zod contracts, so it follows them. */
export function openApiDocument(opts: OpenApiOptions, routes: readonly RouteDescription[] = routeTable): Json {
  const paths: Record<string, Json> = {};
  for (const r of routes) (paths[openApiPath(r.path)] ??= {})[r.method] = operation(r, opts);
  const tags = [...new Set(routes.map((r) => r.tag))].map((name) => ({ name }));
  return {
    openapi: '3.1.1',
    info: {
      title: 'Cellwright API',
      version: opts.version,
      description:
        'The studio’s HTTP API. Every error answers JSON of one shape, { error: { code, message, details? } }; clients branch on code. ' +
        'Browsers sign in with the session cookie; scripts send the same token as a Bearer header. Requests that change data from a browser must come from the studio’s own origin.',
    },
    jsonSchemaDialect: 'https://spec.openapis.org/oas/3.1/dialect/base',
    servers: [{ url: opts.serverUrl }],
    tags,
    paths,
    components: {
      schemas: { Error: jsonSchemaOf(errorBody, 'output') },
      securitySchemes: {
        sessionCookie: { type: 'apiKey', in: 'cookie', name: sessionCookieName, description: 'Set by sign-in (HttpOnly, SameSite=Strict)' },
        bearerToken: { type: 'http', scheme: 'bearer', bearerFormat: 'JWT', description: 'The token sign-in returns' },
        workerToken: { type: 'http', scheme: 'bearer', description: 'The worker token to join, then the worker session it returns' },
      },
    },
  };
}
