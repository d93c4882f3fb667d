import { codebookJsonSchemaText } from '../engine';

/** The URL path the codebook format's JSON Schema is served at; its $id is this path on PUBLIC_URL. */
export const codebookSchemaPath = '/api/schemas/codebook.schema.json';

export interface ApiSchemasService {
  /** PUBLIC_URL, without a trailing slash. */
  readonly publicUrl: string;
  readonly version: string;
  /** The absolute URL of the codebook schema: its $id, and what the API description refers to. */
  readonly codebookSchemaUrl: string;
  /** The codebook format's JSON Schema (draft 2020-12) with its $id, as served. */
  codebookSchemaText(): string;
}

/**
 * The JSON Schemas the API publishes. The codebook schema is the one the format generates from its zod schema (the
 * committed codebook.schema.json is the same text, checked by a test), with an $id added: JSON Schema 2020-12 §8.2.1
 * makes $id the schema's canonical URI, so documents and tools can name it by where it is served.
 */
export function createApiSchemasService(deps: { publicUrl: string; version: string }): ApiSchemasService {
  const codebookSchemaUrl = `${deps.publicUrl}${codebookSchemaPath}`;
  let text: string | undefined;
  return {
    publicUrl: deps.publicUrl,
    version: deps.version,
    codebookSchemaUrl,
    codebookSchemaText() {
      if (text === undefined) {
        const { $schema, ...rest } = JSON.parse(codebookJsonSchemaText()) as Record<string, unknown>;
        text = `${JSON.stringify({ $schema, $id: codebookSchemaUrl, ...rest }, null, 2)}\n`;
      }
      return text;
    },
  };
}
