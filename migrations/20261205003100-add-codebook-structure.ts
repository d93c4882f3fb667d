import type { Knex } from 'knex';

/**
 * A codebook's structure (server/engine/structures/types.ts) has columns of its own so lists can show and group by it
 * without reading the document: its kind, and λ for an entropy-constrained codebook. The rest of the structure (code
 * lengths, tree, stages) stays in the metadata document. Every codebook stored before this was full search.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('codebooks', (t) => {
    t.string('structure', 24).notNullable().defaultTo('full').after('mean_bits');
    t.double('lambda').nullable().after('structure');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.alterTable('codebooks', (t) => {
    t.dropColumn('lambda');
    t.dropColumn('structure');
  });
}
