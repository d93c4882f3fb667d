import type { Knex } from 'knex';

/**
 * The two training figures the codebook and run lists show, as columns, so a list reads neither the metadata
 * document (training source, trace) nor the usage histogram. Rows that exist get 0 (MariaDB's implicit default for a
 * NOT NULL number added to a filled table) until the next migration copies the real figures in.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('codebooks', (t) => {
    // MSE per vector component on the training vectors (training.distortion of the export document).
    t.double('distortion').notNullable();
    // Lloyd updates at the codebook's final size (training.iterations).
    t.integer('iterations').unsigned().notNullable();
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.alterTable('codebooks', (t) => {
    t.dropColumn('distortion');
    t.dropColumn('iterations');
  });
}
