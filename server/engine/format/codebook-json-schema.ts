import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { z } from 'zod';
import { codebookDocumentSchema } from './codebook-schema';

/**
 * JSON Schema (draft 2020-12) of the codebook format, generated from the zod schema so the two cannot drift.
 * Cross-field rules (dimension = patch w·h·channels, codeword counts, checksum) live in refinements that JSON Schema
 * cannot express; they are enforced by parseCodebook.
 */
export function codebookJsonSchemaText(): string {
  const schema = z.toJSONSchema(codebookDocumentSchema, { target: 'draft-2020-12', io: 'input' });
  return `${JSON.stringify({ title: 'Cellwright codebook, revision 2 (reads revision 1)', ...schema }, null, 2)}\n`;
}

export const CODEBOOK_JSON_SCHEMA_PATH = fileURLToPath(new URL('./codebook.schema.json', import.meta.url));

// Regenerate with: node --import tsx server/engine/format/codebook-json-schema.ts
if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  writeFileSync(CODEBOOK_JSON_SCHEMA_PATH, codebookJsonSchemaText());
  process.stdout.write(`wrote ${CODEBOOK_JSON_SCHEMA_PATH}\n`);
}
