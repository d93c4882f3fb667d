import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('codebooks', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.integer('team_id').unsigned().notNullable().references('id').inTable('teams').onDelete('CASCADE');
    // NULL for imported codebooks; a trained codebook lives and dies with its run.
    t.integer('run_id').unsigned().nullable().references('id').inTable('runs').onDelete('CASCADE');
    t.tinyint('bits').unsigned().notNullable();
    t.integer('size').unsigned().notNullable();
    t.integer('dimension').unsigned().notNullable();
    t.tinyint('patch_width').unsigned().notNullable();
    t.tinyint('patch_height').unsigned().notNullable();
    t.tinyint('channels').unsigned().notNullable();
    t.enum('color', ['luma', 'rgb']).notNullable();
    t.tinyint('mean_bits').unsigned().notNullable().defaultTo(0);
    // size × dimension float32 little-endian, row-major: the bytes the checksum is taken over.
    t.specificType('codewords', 'LONGBLOB').notNullable();
    t.json('usage').notNullable();
    t.json('cell_distortion').nullable();
    t.json('trace').notNullable();
    // The export document without its codewords; export = metadata + codewords.
    t.json('metadata').notNullable();
    t.specificType('checksum', 'CHAR(64)').notNullable();
    t.enum('source', ['trained', 'imported']).notNullable();
    t.string('name', 200).notNullable();
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.unique(['run_id', 'size'], { indexName: 'codebooks_run_size_unique' });
    t.index(['team_id', 'created_at'], 'codebooks_team_index');
  });
  await knex.schema.alterTable('jobs', (t) => {
    t.foreign('codebook_id', 'jobs_codebook_foreign').references('id').inTable('codebooks').onDelete('CASCADE');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.alterTable('jobs', (t) => {
    t.dropForeign(['codebook_id'], 'jobs_codebook_foreign');
  });
  await knex.schema.dropTable('codebooks');
}
