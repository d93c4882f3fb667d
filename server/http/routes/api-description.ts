import { Router } from 'express';
import { openApiDocument, type Json } from '../description/openapi';
import type { RouteDeps } from './deps';

/**
 * Mounted at /api: the API's own description and the JSON Schemas it publishes. Public: they describe shapes, never
 * data, and scripts and schema tools fetch them without a session.
 */
export function apiDescriptionRouter(d: RouteDeps): Router {
  const r = Router();
  let document: Json | undefined;

  r.get('/openapi.json', (_req, res) => {
    document ??= openApiDocument({ serverUrl: d.apiSchemas.publicUrl, version: d.apiSchemas.version, codebookSchemaUrl: d.apiSchemas.codebookSchemaUrl });
    res.set('Cache-Control', 'no-cache').json(document);
  });

  // application/schema+json: the media type JSON Schema 2020-12 registers for schemas (core §13.2).
  r.get('/schemas/codebook.schema.json', (_req, res) => {
    res.set('Cache-Control', 'no-cache').type('application/schema+json').send(d.apiSchemas.codebookSchemaText());
  });

  return r;
}
