import type { Knex } from 'knex';

/**
 * A run's codebooks were unique by size, which a λ sweep breaks: an entropy-constrained codebook keeps as many
 * codewords as λ leaves alive, often as many as one of the run's full-search codebooks (a small λ keeps them all), and
 * two λ can leave the same count. A codebook is now unique by run, structure, size and λ: one point per curve and size.
 * λ is null outside a λ sweep and NULLs never collide in a unique index, so the index reads `lambda_key`, a stored
 * column that is λ or −1 (λ is never negative: LAMBDA.min in the run vocabulary is 0).
 * The new index is added before the old is dropped: the runs foreign key needs an index that starts with run_id.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.raw('ALTER TABLE codebooks ADD COLUMN lambda_key DOUBLE AS (COALESCE(lambda, -1)) PERSISTENT AFTER lambda');
  await knex.schema.alterTable('codebooks', (t) => {
    t.unique(['run_id', 'structure', 'size', 'lambda_key'], { indexName: 'codebooks_run_curve_size_unique' });
  });
  await knex.schema.alterTable('codebooks', (t) => {
    t.dropUnique(['run_id', 'size'], 'codebooks_run_size_unique');
  });
}

/** Refused by the database while a run holds two codebooks of one size (a λ sweep's); delete that run first. */
export async function down(knex: Knex): Promise<void> {
  await knex.schema.alterTable('codebooks', (t) => {
    t.unique(['run_id', 'size'], { indexName: 'codebooks_run_size_unique' });
  });
  await knex.schema.alterTable('codebooks', (t) => {
    t.dropUnique(['run_id', 'structure', 'size', 'lambda_key'], 'codebooks_run_curve_size_unique');
  });
  await knex.raw('ALTER TABLE codebooks DROP COLUMN lambda_key');
}
