import { z } from 'zod';
import { role } from './common';

/** A JSON Schema (draft 2020-12) inside the API description: any JSON object. */
const jsonSchemaObject = z.record(z.string(), z.unknown());
const mediaTypes = z.record(z.string(), z.object({ schema: jsonSchemaObject.optional() }));

export const openApiParameter = z.object({
  name: z.string(),
  in: z.enum(['path', 'query', 'header', 'cookie']),
  required: z.boolean(),
  schema: jsonSchemaObject,
});

export const openApiOperation = z.object({
  operationId: z.string(),
  summary: z.string(),
  description: z.string(),
  tags: z.array(z.string()),
  security: z.array(z.record(z.string(), z.array(z.string()))),
  /** Who may call it: public, optional-session, session, member, engineer, admin or worker. */
  'x-cellwright-access': z.string(),
  /** The team roles that may call it, for team routes. */
  'x-cellwright-roles': z.array(role).optional(),
  parameters: z.array(openApiParameter),
  requestBody: z.object({ required: z.boolean(), description: z.string().optional(), content: mediaTypes }).optional(),
  responses: z.record(z.string(), z.object({ description: z.string(), content: mediaTypes.optional() })),
});
export type OpenApiOperation = z.infer<typeof openApiOperation>;

export const openApiMethods = ['get', 'post', 'patch', 'delete'] as const;

/** GET /api/openapi.json (public): the OpenAPI 3.1 document of the API, generated from these contracts. */
export const openApiDocumentResponse = z.object({
  openapi: z.string(),
  info: z.object({ title: z.string(), version: z.string(), description: z.string() }),
  jsonSchemaDialect: z.string(),
  servers: z.array(z.object({ url: z.string() })),
  tags: z.array(z.object({ name: z.string() })),
  paths: z.record(z.string(), z.partialRecord(z.enum(openApiMethods), openApiOperation)),
  components: z.object({
    schemas: z.record(z.string(), jsonSchemaObject),
    securitySchemes: z.record(z.string(), z.record(z.string(), z.unknown())),
  }),
});
export type OpenApiDocument = z.infer<typeof openApiDocumentResponse>;
