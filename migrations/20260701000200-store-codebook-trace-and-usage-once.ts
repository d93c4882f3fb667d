import type { Knex } from 'knex';

/**
 * Each piece of a codebook stored once. The trace and the usage histogram have had columns of their own from the
 * start and were also kept inside `metadata` (the export document without its codewords); from here on `metadata`
 * holds the document without codewords, usage and training.trace, and the repository puts the document back
 * together. The training figures the lists show are copied into the columns the previous migration added.
 */
export async function up(knex: Knex): Promise<void> {
  // Assignments run left to right (MariaDB without SIMULTANEOUS_ASSIGNMENT): the figures are read before metadata changes.
  await knex.raw(`
    UPDATE codebooks SET
      distortion = COALESCE(JSON_VALUE(metadata, '$.training.distortion'), 0),
      iterations = COALESCE(JSON_VALUE(metadata, '$.training.iterations'), 0),
      metadata = JSON_REMOVE(metadata, '$.training.trace', '$.usage')`);
}

export async function down(knex: Knex): Promise<void> {
  // JSON_QUERY(column, '$') hands the column over as JSON, so JSON_SET nests it rather than quoting it as a string.
  // USAGE is a reserved word in MariaDB, hence the quotes.
  await knex.raw(`
    UPDATE codebooks SET
      metadata = JSON_SET(metadata, '$.usage', JSON_QUERY(\`usage\`, '$'), '$.training.trace', JSON_QUERY(trace, '$')),
      distortion = 0,
      iterations = 0`);
}
