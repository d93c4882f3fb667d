import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('image_sets', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.integer('team_id').unsigned().notNullable().references('id').inTable('teams').onDelete('CASCADE');
    t.string('name', 120).notNullable();
    t.text('description').nullable();
    // A set outlives the account that made it.
    t.integer('created_by').unsigned().nullable().references('id').inTable('users').onDelete('SET NULL');
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.datetime('updated_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.unique(['team_id', 'name'], { indexName: 'image_sets_team_name_unique' });
  });
  await knex.schema.createTable('images', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.integer('team_id').unsigned().notNullable().references('id').inTable('teams').onDelete('CASCADE');
    t.integer('set_id').unsigned().notNullable().references('id').inTable('image_sets').onDelete('CASCADE');
    // Shown to people only; the stored object is named by its hash, never by this.
    t.string('file_name', 255).notNullable();
    t.specificType('sha256', 'CHAR(64) CHARACTER SET ascii COLLATE ascii_bin').notNullable();
    t.integer('width').unsigned().notNullable();
    t.integer('height').unsigned().notNullable();
    t.tinyint('channels').unsigned().notNullable();
    t.string('format', 16).notNullable();
    t.bigInteger('bytes').unsigned().notNullable();
    t.enum('role', ['training', 'held-out']).notNullable().defaultTo('training');
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.unique(['set_id', 'sha256'], { indexName: 'images_set_sha256_unique' });
    t.index(['team_id'], 'images_team_index');
    // Answers "is this object still referenced anywhere?" before anything collects it.
    t.index(['sha256'], 'images_sha256_index');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('images');
  await knex.schema.dropTable('image_sets');
}
